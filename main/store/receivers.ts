// Runs in Node. Repositories for receiver profiles and serial command-set templates (schema 002).
// Built-in templates live in app/serialtemplate and are listed beside the stored ones, read-only.
import { randomUUID } from 'node:crypto';
import { BenchError } from '../../app/errors';
import { validateCalibration } from '../../app/calibration';
import {
  InjectionSchema,
  ReceiverInputSchema,
  type InjectionRecord,
  type StoredReceiver,
} from '../../app/receiver';
import {
  BUILTIN_TEMPLATES,
  builtinTemplate,
  validateTemplate,
  type SerialTemplate,
} from '../../app/serialtemplate';
import { benchErrorFromZod } from '../../app/zodissue';
import type { TemplateEntry } from '../../app/api/receivers';
import type { Store } from './store';
import { takesTemplate, templateNameInSpec } from '../sources';
import { connectionOf } from './connection';

interface ReceiverRow {
  id: string;
  name: string;
  source: string;
  template: string | null;
  calibration_json: string | null;
  injections_json: string;
  bandwidth_hz: number;
  max_input_dbm: number;
  notes: string;
  created_at: string;
  updated_at: string;
}

const now = () => new Date().toISOString();

function rowToReceiver(r: ReceiverRow): StoredReceiver {
  return {
    id: r.id,
    name: r.name,
    source: r.source,
    template: r.template,
    calibration: r.calibration_json ? validateCalibration(JSON.parse(r.calibration_json)) : null,
    bandwidthHz: r.bandwidth_hz,
    maxInputDbm: r.max_input_dbm,
    notes: r.notes,
    injections: JSON.parse(r.injections_json) as InjectionRecord[],
    createdAt: r.created_at,
    updatedAt: r.updated_at,
  };
}

export class ReceiverRepo {
  constructor(private readonly store: Store) {}

  private get db() {
    return connectionOf(this.store);
  }

  // ---- templates -----------------------------------------------------------------------------

  listTemplates(): TemplateEntry[] {
    const rows = this.db.prepare('SELECT json, updated_at FROM serial_templates ORDER BY name').all() as {
      json: string;
      updated_at: string;
    }[];
    return [
      ...BUILTIN_TEMPLATES.map((t) => ({ template: t, builtin: true, updatedAt: null })),
      ...rows.map((r) => ({
        template: validateTemplate(JSON.parse(r.json)),
        builtin: false,
        updatedAt: r.updated_at,
      })),
    ];
  }

  /** A template by name: built-in first, then stored; ENOTFOUND naming it otherwise. */
  template(name: string): SerialTemplate {
    const b = builtinTemplate(name);
    if (b) return b;
    const r = this.db.prepare('SELECT json FROM serial_templates WHERE name = ?').get(name) as
      { json: string } | undefined;
    if (!r) {
      const known = this.listTemplates()
        .map((e) => e.template.name)
        .join(', ');
      throw new BenchError('ENOTFOUND', `no template named "${name}" (known: ${known})`, 'template');
    }
    return validateTemplate(JSON.parse(r.json));
  }

  /**
   * Saves (creates or replaces) a template after validation. A built-in name is refused: save a copy under
   * a new name. `replace` false refuses an existing name (import without overwriting).
   */
  saveTemplate(input: unknown, replace = true): SerialTemplate {
    const t = validateTemplate(input, 'template');
    if (builtinTemplate(t.name))
      throw new BenchError(
        'ECONFLICT',
        `"${t.name}" is a built-in template; save your version under another name`,
        'template.name',
      );
    const at = now();
    this.store.tx(() => {
      const exists = this.db.prepare('SELECT 1 FROM serial_templates WHERE name = ?').get(t.name);
      if (exists && !replace)
        throw new BenchError('ECONFLICT', `a template named "${t.name}" already exists`, 'template.name');
      this.db
        .prepare(
          `INSERT INTO serial_templates (name, json, created_at, updated_at) VALUES (?, ?, ?, ?)
           ON CONFLICT(name) DO UPDATE SET json = excluded.json, updated_at = excluded.updated_at`,
        )
        .run(t.name, JSON.stringify(t), at, at);
    });
    return t;
  }

  deleteTemplate(name: string): void {
    if (builtinTemplate(name))
      throw new BenchError('ECONFLICT', `"${name}" is built in and cannot be removed`, 'name');
    const users = this.db.prepare('SELECT name FROM receiver_profiles WHERE template = ?').all(name) as {
      name: string;
    }[];
    if (users.length)
      throw new BenchError(
        'ECONFLICT',
        `template "${name}" is used by receiver ${users.map((u) => `"${u.name}"`).join(', ')}; change those first`,
        'name',
      );
    const info = this.db.prepare('DELETE FROM serial_templates WHERE name = ?').run(name);
    if (info.changes === 0) throw new BenchError('ENOTFOUND', `no stored template named "${name}"`, 'name');
  }

  // ---- receiver profiles ---------------------------------------------------------------------

  listReceivers(): StoredReceiver[] {
    return (this.db.prepare('SELECT * FROM receiver_profiles ORDER BY name').all() as ReceiverRow[]).map(
      rowToReceiver,
    );
  }

  getReceiver(id: string): StoredReceiver {
    const r = this.db.prepare('SELECT * FROM receiver_profiles WHERE id = ?').get(id) as
      ReceiverRow | undefined;
    if (!r) throw new BenchError('ENOTFOUND', `no receiver profile with id "${id}"`, 'receiverId');
    return rowToReceiver(r);
  }

  findReceiver(name: string): StoredReceiver {
    const r = this.db.prepare('SELECT * FROM receiver_profiles WHERE name = ?').get(name) as
      ReceiverRow | undefined;
    if (!r) {
      const known = this.listReceivers()
        .map((x) => `"${x.name}"`)
        .join(', ');
      throw new BenchError(
        'ENOTFOUND',
        `no receiver profile named "${name}"${known ? ` (have ${known})` : ''}`,
        'receiver',
      );
    }
    return rowToReceiver(r);
  }

  /**
   * Creates or updates a profile. The calibration is validated; a serial source must name a template that
   * exists. `check` lets the caller verify the source spec (the service asks the source registry).
   */
  saveReceiver(input: unknown, check?: (spec: string, template: string | null) => void): StoredReceiver {
    const parsed = ReceiverInputSchema.safeParse(input);
    if (!parsed.success) throw benchErrorFromZod(parsed.error, '');
    const p = parsed.data;
    const calibration = p.calibration == null ? null : validateCalibration(p.calibration);
    if (takesTemplate(p.source) && !p.template && !templateNameInSpec(p.source))
      throw new BenchError('EINVAL', 'a serial receiver needs a command-set template', 'template');
    if (p.template) this.template(p.template);
    check?.(p.source, p.template);
    const at = now();
    return this.store.tx(() => {
      const clash = this.db.prepare('SELECT id FROM receiver_profiles WHERE name = ?').get(p.name) as
        { id: string } | undefined;
      if (clash && clash.id !== p.id)
        throw new BenchError('ECONFLICT', `a receiver profile named "${p.name}" already exists`, 'name');
      if (p.id) {
        const info = this.db
          .prepare(
            `UPDATE receiver_profiles SET name = ?, source = ?, template = ?, calibration_json = ?, bandwidth_hz = ?,
               max_input_dbm = ?, notes = ?, updated_at = ? WHERE id = ?`,
          )
          .run(
            p.name,
            p.source,
            p.template,
            calibration ? JSON.stringify(calibration) : null,
            p.bandwidthHz,
            p.maxInputDbm,
            p.notes,
            at,
            p.id,
          );
        if (info.changes === 0)
          throw new BenchError('ENOTFOUND', `no receiver profile with id "${p.id}"`, 'id');
        return this.getReceiver(p.id);
      }
      const id = randomUUID();
      this.db
        .prepare(
          `INSERT INTO receiver_profiles (id, name, source, template, calibration_json, injections_json, bandwidth_hz,
             max_input_dbm, notes, created_at, updated_at) VALUES (?, ?, ?, ?, ?, '[]', ?, ?, ?, ?, ?)`,
        )
        .run(
          id,
          p.name,
          p.source,
          p.template,
          calibration ? JSON.stringify(calibration) : null,
          p.bandwidthHz,
          p.maxInputDbm,
          p.notes,
          at,
          at,
        );
      return this.getReceiver(id);
    });
  }

  /** Stores a fitted calibration and the injections it came from, replacing the profile's table. */
  setCalibration(id: string, calibration: unknown, injections: unknown[]): StoredReceiver {
    const cal = calibration == null ? null : validateCalibration(calibration);
    const inj = injections.map((x, i) => {
      const r = InjectionSchema.safeParse(x);
      if (!r.success) throw benchErrorFromZod(r.error, `injections[${i}]`);
      return r.data;
    });
    const info = this.db
      .prepare(
        'UPDATE receiver_profiles SET calibration_json = ?, injections_json = ?, updated_at = ? WHERE id = ?',
      )
      .run(cal ? JSON.stringify(cal) : null, JSON.stringify(inj), now(), id);
    if (info.changes === 0)
      throw new BenchError('ENOTFOUND', `no receiver profile with id "${id}"`, 'receiverId');
    return this.getReceiver(id);
  }

  deleteReceiver(id: string): void {
    const info = this.db.prepare('DELETE FROM receiver_profiles WHERE id = ?').run(id);
    if (info.changes === 0)
      throw new BenchError('ENOTFOUND', `no receiver profile with id "${id}"`, 'receiverId');
  }
}
