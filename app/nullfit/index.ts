// Runs anywhere (app/ is runtime-free). The null navigator: fits of the residual carrier against one or
// two trimmers, the next trial setting, and settle detection for the readings that feed them.

export { fitNull1D, type Fit1DOptions, type FitDesign, type NullFit1D, type Reading1D } from './fit1d';
export {
  fitNull2D,
  type ConfidenceEllipse,
  type Design2D,
  type Fit2DOptions,
  type NullFit2D,
  type Reading2D,
} from './fit2d';
export { suggestNext2D, type Suggestion2D, type TrimUnits } from './suggest';
export { nextTrial1D, type Guide1DOptions, type Trial1D } from './guide1d';
export { nextTrial2D, type Bounds2D, type Guide2DOptions, type Trial2D } from './guide2d';
export { type GuideOptions, type TrialMode } from './guide';
export { SettleDetector, type SettleOptions, type SettleState } from './settle';
export { type FitOptions } from './readings';
export { type Loss } from './lm';
