// Runs anywhere (app/ is runtime-free). The one wording of the usual RF cautions, shown wherever the app
// refuses a set-up or warns about the power reaching the receiver: the service, the CLI, the sheet and the
// renderer all print this text, never a wording of their own.

/** The usual cautions about transmitter power into a receiver, RF exposure and mains safety. */
export const RF_CAUTION =
  'Never connect a transmitter to a receiver without enough attenuation; check the pad and sampler power ratings, ' +
  'transmit into a dummy load, mind RF exposure and mains safety, and follow your licence and local regulations.';

/** What the app can and cannot check, said where a set-up is entered. */
export const SETUP_CAUTION =
  'The app refuses a set-up whose computed receiver input exceeds the rated maximum, but it cannot see your ' +
  'cables. ' +
  RF_CAUTION;
