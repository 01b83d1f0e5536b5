// Runs anywhere (app/ is runtime-free). The warnings an IQ figure carries: what the recording or stream
// itself says about its own trustworthiness, worked out from the sample rate, the carrier and tone offsets
// the user gave, and the samples. Each is a code and a sentence, printed with the figures (never instead).

export interface IqFlag {
  code: 'clipped' | 'line-on-dc' | 'image-on-line' | 'line-on-line' | 'search-edge';
  message: string;
}

/** A line closer than this many bins to DC, to another line or to another line's image is not apart. */
export const COINCIDENCE_BINS = 4;
/** Above this fraction of samples at full scale the levels are refused, not only flagged. */
export const CLIP_REFUSE_FRACTION = 1e-3;

export interface LinePlan {
  sampleRate: number;
  binHz: number;
  /** The carrier's offset from the centre of the capture, Hz. */
  carrierHz: number;
  toneHz: number;
}

/** The measured lines at their offsets from the centre: carrier, tones, IMD3 and IMD5 products. */
export function lineOffsets(p: LinePlan): { name: string; hz: number }[] {
  const out: { name: string; hz: number }[] = [{ name: 'carrier', hz: p.carrierHz }];
  for (const [name, k] of [
    ['upper tone', 1],
    ['lower tone', -1],
    ['IMD3 upper', 3],
    ['IMD3 lower', -3],
    ['IMD5 upper', 5],
    ['IMD5 lower', -5],
  ] as const)
    out.push({ name, hz: p.carrierHz + k * p.toneHz });
  return out;
}

/**
 * Every coincidence the plan itself causes: a line on DC (most SDRs show a spike at their centre), a line
 * on the image of another (an I/Q imbalance mirrors f to −f), two lines in one another's bins. Each flag
 * suggests an offset that clears them all, when one fits in the band.
 */
export function coincidenceFlags(p: LinePlan): IqFlag[] {
  const lines = lineOffsets(p).filter((l) => Math.abs(l.hz) < p.sampleRate / 2);
  const near = COINCIDENCE_BINS * p.binHz;
  const flags: IqFlag[] = [];
  const clear = suggestOffset(p);
  const hint = clear === null ? '' : ` A carrier offset of ${clear} Hz (--carrier-hz) clears every line.`;
  for (const l of lines)
    if (Math.abs(l.hz) < near)
      flags.push({
        code: 'line-on-dc',
        message: `the ${l.name} sits ${Math.abs(l.hz).toFixed(0)} Hz from the centre, where most SDRs show a DC spike: its level may be the spike's.${hint}`,
      });
  for (let i = 0; i < lines.length; i++)
    for (let j = i + 1; j < lines.length; j++) {
      const [a, b] = [lines[i], lines[j]];
      if (Math.abs(a.hz + b.hz) < near && Math.abs(b.hz) >= near)
        flags.push({
          code: 'image-on-line',
          message: `the ${a.name} (${a.hz.toFixed(0)} Hz) and the ${b.name} (${b.hz.toFixed(0)} Hz) sit on each other's images (an I/Q imbalance mirrors f to −f): each level may hold the other's image.${hint}`,
        });
    }
  for (let i = 0; i < lines.length; i++)
    for (let j = i + 1; j < lines.length; j++)
      if (Math.abs(lines[i].hz - lines[j].hz) < near)
        flags.push({
          code: 'line-on-line',
          message: `the ${lines[i].name} and the ${lines[j].name} fall within ${COINCIDENCE_BINS} bins of each other: neither level is its own.`,
        });
  return flags;
}

/** The smallest whole-hundred-Hz carrier offset at which no line meets DC or another line's image. */
export function suggestOffset(p: LinePlan): number | null {
  const near = COINCIDENCE_BINS * p.binHz;
  for (let c = 100; c < p.sampleRate / 2; c += 100) {
    const lines = lineOffsets({ ...p, carrierHz: c }).map((l) => l.hz);
    if (lines.some((hz) => Math.abs(hz) >= p.sampleRate / 2 - near)) continue;
    const dc = lines.some((hz) => Math.abs(hz) < near);
    const image = lines.some((a) => lines.some((b) => a !== b && Math.abs(a + b) < near));
    if (!dc && !image) return c;
  }
  return null;
}

/** The clipping flag for `clipped` of `total` components at full scale, or null. */
export function clipFlag(clipped: number, total: number): IqFlag | null {
  if (clipped === 0 || total === 0) return null;
  const pct = (100 * clipped) / total;
  return {
    code: 'clipped',
    message: `${clipped} of ${total} sample components (${pct < 0.01 ? '<0.01' : pct.toFixed(2)} %) sit at or beyond full scale: the SDR input clipped, so the tones read low and clipping products appear. Add attenuation ahead of the SDR.`,
  };
}

/** A sideband found at the edge of its search window (a transmitter's crystal further off than searched). */
export function searchEdgeFlags(edge: readonly ('upper' | 'lower')[], searchHz: number): IqFlag[] {
  return edge.map((side) => ({
    code: 'search-edge',
    message: `the ${side} sideband was found at the edge of its ±${searchHz.toFixed(0)} Hz search window: the true line may lie beyond (a transmitter's crystal off by more), so its level and every figure from it may be a neighbour's, and no DSB/SSB call is made. Give the carrier's real offset (--carrier-hz) or a wider --search-hz.`,
  }));
}
