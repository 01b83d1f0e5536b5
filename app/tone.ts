// Runs anywhere (app/ is runtime-free). The null tone's pitch: an audible level meter for when the eyes are
// on the trimmer, not the screen (renderer/views/farview.ts plays it).

/** Semitones of pitch per dB of level: one dB becomes a step any ear hears (our choice). */
export const SEMITONES_PER_DB = 1;
const LOW_HZ = 200;
const HIGH_HZ = 1600;

/**
 * The pitch for a level: a semitone per dB, lower is deeper, about the reference's 600 Hz. Out of the
 * 200–1600 Hz band the reference moves with the level, so the tone never leaves what a small speaker plays.
 */
export function tonePitch(levelDbm: number, refDbm: number): { hz: number; refDbm: number } {
  let hz = 600 * 2 ** ((SEMITONES_PER_DB * (levelDbm - refDbm)) / 12);
  let ref = refDbm;
  if (hz < LOW_HZ || hz > HIGH_HZ) {
    const edge = hz < LOW_HZ ? LOW_HZ : HIGH_HZ;
    ref = levelDbm - (12 * Math.log2(edge / 600)) / SEMITONES_PER_DB;
    hz = edge;
  }
  return { hz, refDbm: ref };
}
