// Runs in Node. The service side of real receivers: serial templates and receiver profiles in the database,
// the guided calibration (read the receiver at a known generator level, then fit a table), and what a
// session's receiver resolves to (template snapshot, calibration for what the source reports).
import type { ReceiverProfile } from '../../app/api';
import type { CalibrationReadResult, FitResult, ReceiverCallResults } from '../../app/api/receivers';
import {
  fitCalibrationFromInjections,
  applyCalibration,
  type CalibrationQuantity,
} from '../../app/calibration';
import { BenchError } from '../../app/errors';
import { calibrationFor, InjectionSchema, mergeBand } from '../../app/receiver';
import { validateTemplate, type SerialTemplate } from '../../app/serialtemplate';
import { benchErrorFromZod } from '../../app/zodissue';
import { findDriver, takesTemplate, templateNameInSpec } from '../sources';
import { listSerialPorts } from '../sources/serialports';
import type { LevelSource, SourceEnv } from '../sources/types';
import { ReceiverRepo } from '../store/receivers';
import type { GroupHandlers, ServiceContext } from './handlers';

export class ReceiverCalls {
  readonly repo: ReceiverRepo;

  constructor(private readonly ctx: ServiceContext) {
    this.repo = new ReceiverRepo(ctx.store);
  }

  /**
   * The template a receiver uses: given in full, given by name, or named in its spec. Null for sources that
   * take none; EINVAL for a serial source without one.
   */
  templateFor(source: string, template: unknown): SerialTemplate | null {
    if (template != null && template !== '' && !takesTemplate(source))
      throw new BenchError('EINVAL', 'only a serial receiver takes a command-set template', 'template');
    if (template != null && typeof template === 'object')
      return validateTemplate(template, 'receiver.template');
    const name = typeof template === 'string' ? template : templateNameInSpec(source);
    if (name) return this.repo.template(name);
    if (takesTemplate(source))
      throw new BenchError('EINVAL', 'a serial receiver needs a command-set template', 'receiver.template');
    return null;
  }

  /**
   * A session's receiver as stored: the template copied in full, and the calibration made explicit when the
   * source does not report dB relative to S9 (the R.1 default in S-units, the identity for dBm; raw counts
   * need a table of their own).
   */
  resolveSessionReceiver(r: ReceiverProfile): ReceiverProfile {
    const driver = findDriver(r.source);
    const template = this.templateFor(r.source, r.template);
    const env: SourceEnv = template ? { template } : {};
    const quantity = (driver.quantity?.(r.source, env) ?? 'strength-db') as CalibrationQuantity;
    const calibration =
      r.calibration == null && quantity === 'strength-db' ? null : calibrationFor(r.calibration, quantity);
    return { ...r, calibration, ...(template ? { template } : { template: undefined }) };
  }

  private source(spec: string, template: SerialTemplate | null): LevelSource {
    const env: SourceEnv = template ? { template } : {};
    return this.ctx.makeSource(spec, env);
  }

  async calibrationRead(receiverId: string, freqHz: number, count: number): Promise<CalibrationReadResult> {
    const rx = this.repo.getReceiver(receiverId);
    const busy = this.ctx.live()?.source.spec ?? null;
    if (busy !== null && busy === rx.source)
      throw new BenchError(
        'ECONFLICT',
        `the open session is reading ${rx.source}: close the session before calibrating this receiver`,
        'receiverId',
      );
    const src = this.source(rx.source, this.templateFor(rx.source, rx.template));
    await src.open();
    try {
      await src.setFrequency(freqHz);
      // Let the meter settle after retuning: three of R.1's 500 ms decay time constants.
      await src.sleep(1500);
      const values: number[] = [];
      let quantity = '';
      for (let i = 0; i < count; i++) {
        const s = await src.read();
        values.push(s.raw);
        quantity = s.quantity;
      }
      const mean = values.reduce((a, x) => a + x, 0) / values.length;
      return {
        raw: Number(mean.toFixed(4)),
        n: values.length,
        spread: Math.max(...values) - Math.min(...values),
        quantity,
        freqHz,
      };
    } finally {
      await src.close();
    }
  }

  fitCalibration(
    receiverId: string,
    injections: unknown[],
    name: string | undefined,
    save: boolean,
  ): FitResult {
    const rx = this.repo.getReceiver(receiverId);
    const inj = injections.map((x, i) => {
      const r = InjectionSchema.safeParse(x);
      if (!r.success) throw benchErrorFromZod(r.error, `injections[${i}]`);
      return r.data;
    });
    const template = this.templateFor(rx.source, rx.template);
    const quantity = (findDriver(rx.source).quantity?.(rx.source, template ? { template } : {}) ??
      'strength-db') as CalibrationQuantity;
    // The new band reaches an octave either side of its frequencies, but only halfway (geometrically) to a
    // frequency calibrated before, so each calibrated frequency keeps the table made there.
    const freqs = inj.map((x) => x.freqHz);
    const lo = Math.min(...freqs);
    const hi = Math.max(...freqs);
    const before = rx.calibration?.quantity === quantity ? rx.injections.map((x) => x.freqHz) : [];
    const below = before.filter((f) => f < lo);
    const above = before.filter((f) => f > hi);
    const fromHz = below.length ? Math.max(lo / 2, Math.sqrt(Math.max(...below) * lo)) : lo / 2;
    const toHz = above.length ? Math.min(hi * 2, Math.sqrt(Math.min(...above) * hi)) : hi * 2;
    const calibration = fitCalibrationFromInjections(inj, name ?? `${rx.name} (guided calibration)`, {
      quantity,
      fromHz,
      toHz,
      madeAt: new Date().toISOString().slice(0, 10),
    });
    const points = inj.map((p) => ({ raw: p.raw, dbm: applyCalibration(calibration, p.raw, p.freqHz).dbm }));
    // Calibrated band by band: the new band replaces what the old table said there, the rest stays.
    const own = rx.calibration && rx.calibration.quantity === quantity ? rx.calibration : null;
    const merged = own ? mergeBand(own, calibration) : calibration;
    const band = calibration.bands[0];
    const keptInj = own ? rx.injections.filter((x) => x.freqHz < band.fromHz || x.freqHz >= band.toHz) : [];
    const receiver = save ? this.repo.setCalibration(rx.id, merged, [...keptInj, ...inj]) : null;
    return { calibration: merged, points, receiver };
  }

  handlers(): GroupHandlers<keyof ReceiverCallResults> {
    const check = (spec: string, template: string | null) => {
      const d = findDriver(spec);
      if (takesTemplate(spec) || template) d.quantity?.(spec, { template: this.templateFor(spec, template) });
      else d.quantity?.(spec);
    };
    return {
      listTemplates: () => this.repo.listTemplates(),
      saveTemplate: (a) => this.repo.saveTemplate(a.template, a.replace),
      deleteTemplate: (a) => {
        this.repo.deleteTemplate(a.name);
        return null;
      },
      listReceivers: () => this.repo.listReceivers(),
      saveReceiver: (a) => this.repo.saveReceiver(a.receiver, check),
      deleteReceiver: (a) => {
        this.repo.deleteReceiver(a.id);
        return null;
      },
      calibrationRead: (a) => this.calibrationRead(a.receiverId, a.freqHz, a.count),
      fitCalibration: (a) => this.fitCalibration(a.receiverId, a.injections, a.name, a.save),
      listSerialPorts: () => listSerialPorts(),
    };
  }
}
