// Runs anywhere (app/ is runtime-free). The spectral engine's public surface.
export { Window, WINDOW_NAMES, type WindowName } from './window';
export { Fft, createFft, isFftSize } from './fft';
export { SpectrumAverager, type AveragedSpectrum } from './averager';
export {
  measureSpectrum,
  measureIq,
  defaultFftSize,
  minimumToneBins,
  COMPONENT_ORDER,
  type ComponentRole,
  type ComponentLevel,
  type BoundedDb,
  type TwoToneParams,
  type TwoToneMeasurement,
  type IqMeasureOptions,
} from './measure';
export { traceSpectrum, type SpectrumTrace } from './display';
export { medianToMean, noiseExceedance } from './stats';
