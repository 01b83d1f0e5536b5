// Runs anywhere (app/ is runtime-free). From dBFS to dBm at the receiver input: an SDR has no absolute
// scale of its own, so a level in dBFS becomes a power through one figure per receiver and gain setting,
// the level at its input that reads 0 dBFS ("dBm at full scale"). That figure comes from the receiver's
// profile or from a reference injection: a known generator level through a known pad, read in dBFS.
import { check, finiteIn } from '../errors';

/** The calibration stored with every reading an SDR measured: how its dBFS became dBm. */
export interface DbfsCalibration {
  kind: 'dbfs-offset';
  /** Level at the receiver input that reads 0 dBFS, dBm (-200..+50). */
  dbmAtFullScale: number;
  /** Standard uncertainty of that figure, dB (k = 1). */
  uDb: number;
  /** Where the figure came from. */
  from: 'profile' | 'injection';
  /** The injection it was derived from, when it was. */
  injection?: ReferenceInjection;
}

/** A reference injection: a generator of known level through a known pad into the SDR. */
export interface ReferenceInjection {
  /** Generator output, dBm. */
  generatorDbm: number;
  /** Uncertainty of the generator's level, dB (k = 1). */
  generatorUDb: number;
  /** Attenuation between generator and receiver input, dB (>= 0). */
  padDb: number;
  /** Uncertainty of the attenuation, dB (k = 1). */
  padUDb: number;
  /** What the SDR read for the injected tone, dBFS. */
  readDbfs: number;
  /** Noise uncertainty of that reading, dB (k = 1). */
  readUDb: number;
}

/** A calibration from a profile figure. */
export function profileDbfsCalibration(dbmAtFullScale: number, uDb: number): DbfsCalibration {
  finiteIn(dbmAtFullScale, 'dbmAtFullScale', -200, 50, 'dBm');
  finiteIn(uDb, 'uDb', 0, 20, 'dB');
  return { kind: 'dbfs-offset', dbmAtFullScale, uDb, from: 'profile' };
}

/**
 * The full-scale figure from a reference injection: the receiver input saw generatorDbm - padDb and
 * read readDbfs, so 0 dBFS is (generatorDbm - padDb - readDbfs) dBm. The uncertainties add in quadrature
 * (GUM, uncorrelated inputs).
 */
export function injectionDbfsCalibration(inj: ReferenceInjection): DbfsCalibration {
  finiteIn(inj.generatorDbm, 'generatorDbm', -200, 50, 'dBm');
  finiteIn(inj.generatorUDb, 'generatorUDb', 0, 20, 'dB');
  finiteIn(inj.padDb, 'padDb', 0, 200, 'dB');
  finiteIn(inj.padUDb, 'padUDb', 0, 20, 'dB');
  finiteIn(inj.readDbfs, 'readDbfs', -250, 10, 'dBFS');
  finiteIn(inj.readUDb, 'readUDb', 0, 20, 'dB');
  const dbmAtFullScale = inj.generatorDbm - inj.padDb - inj.readDbfs;
  check(
    dbmAtFullScale >= -200 && dbmAtFullScale <= 50,
    'readDbfs',
    `gives ${dbmAtFullScale.toFixed(1)} dBm at full scale, outside -200..+50 dBm: check the generator level and pad`,
  );
  const uDb = Math.sqrt(inj.generatorUDb ** 2 + inj.padUDb ** 2 + inj.readUDb ** 2);
  return { kind: 'dbfs-offset', dbmAtFullScale, uDb, from: 'injection', injection: { ...inj } };
}

/**
 * A level in dBFS as dBm at the receiver input, with its uncertainty: the calibration's and the
 * reading's (noise) in quadrature.
 * @param uReadDb the reading's own standard uncertainty, dB (0 when it is a bound)
 */
export function dbfsToDbm(dbfs: number, uReadDb: number, cal: DbfsCalibration): { dbm: number; uDb: number } {
  finiteIn(dbfs, 'dbfs', -400, 40, 'dBFS');
  finiteIn(uReadDb, 'uDb', 0, 100, 'dB');
  return { dbm: dbfs + cal.dbmAtFullScale, uDb: Math.sqrt(uReadDb ** 2 + cal.uDb ** 2) };
}

/** True for a stored calibration of this kind (readings measured by FFT), as opposed to a receiver table. */
export function isDbfsCalibration(x: unknown): boolean {
  return typeof x === 'object' && x !== null && (x as { kind?: unknown }).kind === 'dbfs-offset';
}

/** Checks a stored or imported dBFS calibration; EINVAL naming the field. */
export function validateDbfsCalibration(x: unknown): DbfsCalibration {
  check(isDbfsCalibration(x), 'kind', 'must be "dbfs-offset"');
  const c = x as DbfsCalibration;
  check(
    c.from === 'profile' || c.from === 'injection',
    'from',
    `must be "profile" or "injection", got ${String(c.from)}`,
  );
  if (c.from === 'injection') {
    check(typeof c.injection === 'object' && c.injection !== null, 'injection', 'is missing');
    const again = injectionDbfsCalibration(c.injection);
    check(
      Math.abs(again.dbmAtFullScale - c.dbmAtFullScale) < 1e-6,
      'dbmAtFullScale',
      `does not follow from the injection (${again.dbmAtFullScale} dBm)`,
    );
    return { ...again, uDb: finiteIn(c.uDb, 'uDb', 0, 20, 'dB') };
  }
  return profileDbfsCalibration(c.dbmAtFullScale, c.uDb);
}
