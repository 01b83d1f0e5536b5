// Runs in the renderer. The receivers dialog: stored receiver profiles (source, template, bandwidth, rated
// maximum input), the guided calibration of one (signal generator at known levels through a known pad), and
// the serial command-set templates (edit, import, export).
import type { ServiceClient, TemplateEntry } from '../../app/api';
import type { StoredReceiver } from '../../app/receiver';
import { escapeControls, unescapeControls, type SerialTemplate } from '../../app/serialtemplate';
import { ApiError } from '../api';
import { clear, h } from '../dom';
import { dbm } from '../format';
import { readNumber } from '../numinput';
import { openModal } from '../dialog';

type Notify = (level: 'info' | 'warn' | 'error', msg: string) => void;

function field(label: string, input: HTMLElement, cls = ''): HTMLLabelElement {
  return h('label', { class: cls }, label, input);
}

function num(el: HTMLInputElement, what: string): number {
  return readNumber(el, what);
}

/** An error with the field it names, as the service reports it. */
function say(el: HTMLElement, e: unknown): void {
  el.textContent = e instanceof Error ? e.message : String(e);
}

export async function showReceiversDialog(api: ServiceClient, notify: Notify): Promise<void> {
  const overlay = h('div', { class: 'overlay', id: 'receivers-dialog' });
  const dialog = h('div', { class: 'dialog wide-dialog' });
  overlay.append(dialog);
  let close = () => overlay.remove();
  dialog.append(
    h(
      'div',
      { class: 'row spread center' },
      h('h1', {}, 'Receivers'),
      h('button', { type: 'button', class: 'ghost', id: 'receivers-close', onclick: () => close() }, 'Close'),
    ),
    h(
      'p',
      { class: 'hint' },
      'A receiver profile is how Nullbench reads one receiver: its link (net:HOST:PORT for the network ' +
        'rig-control protocol, serial:/dev/PATH@BAUD with a command-set template, or sim), its calibration, its ' +
        'bandwidth and its rated maximum input, above which sessions and plans are refused.',
    ),
  );
  const state = {
    receivers: [] as StoredReceiver[],
    templates: [] as TemplateEntry[],
    selected: null as StoredReceiver | null,
  };
  const profiles = h('section', { class: 'card', id: 'rx-profiles' });
  const calib = h('section', { class: 'card', id: 'rx-calibration' });
  const templates = h('section', { class: 'card', id: 'rx-templates' });
  dialog.append(h('div', { class: 'two' }, profiles, calib), templates);
  close = openModal(overlay, true);

  const reload = async () => {
    [state.receivers, state.templates] = await Promise.all([
      api.call('listReceivers', {}),
      api.call('listTemplates', {}),
    ]);
    if (state.selected) state.selected = state.receivers.find((r) => r.id === state.selected!.id) ?? null;
    renderProfiles();
    renderCalibration();
    renderTemplates();
  };

  // ---- receiver profiles ---------------------------------------------------------------------
  function renderProfiles(): void {
    clear(profiles);
    const body = h('tbody', { id: 'rx-rows' });
    for (const r of state.receivers) {
      body.append(
        h(
          'tr',
          {
            class: `pick${state.selected?.id === r.id ? ' chosen' : ''}`,
            tabindex: 0,
            'data-receiver': r.name,
            onclick: () => {
              state.selected = r;
              renderProfiles();
              renderCalibration();
            },
          },
          h('td', {}, r.name),
          h('td', {}, r.source),
          h('td', { class: 'num' }, dbm(r.maxInputDbm)),
          h('td', {}, r.calibration ? r.calibration.name : 'IARU R.1 default'),
        ),
      );
    }
    const s = state.selected;
    const name = h('input', { name: 'rx-name', value: s?.name ?? '' });
    const source = h('input', {
      name: 'rx-source',
      value: s?.source ?? 'net:127.0.0.1:4532',
      placeholder: 'net:HOST:PORT or serial:/dev/PATH@BAUD',
    });
    const template = h(
      'select',
      { name: 'rx-template' },
      h('option', { value: '' }, '— none (not a serial receiver) —'),
      ...state.templates.map((t) =>
        h('option', { value: t.template.name, selected: s?.template === t.template.name }, t.template.name),
      ),
    );
    const bw = h('input', {
      name: 'rx-bandwidth',
      value: String(s?.bandwidthHz ?? 500),
      inputmode: 'decimal',
    });
    const maxIn = h('input', { name: 'rx-maxin', value: String(s?.maxInputDbm ?? 10), inputmode: 'decimal' });
    const err = h('div', { class: 'error-text', id: 'rx-error', role: 'alert' });
    const save = h(
      'button',
      { type: 'submit', class: 'primary', id: 'rx-save' },
      s ? 'Save changes' : 'Add receiver',
    );
    // The machine's serial ports (stable by-id names first) offered in the link field; any path may be typed.
    const ports = h('datalist', { id: 'rx-ports' });
    source.setAttribute('list', 'rx-ports');
    void api
      .call('listSerialPorts', {})
      .then((list) => {
        const chosen = state.templates.find((t) => t.template.name === template.value)?.template.defaultBaud;
        const baud = /^serial:.*@(\d+)/.exec(source.value)?.[1] ?? String(chosen ?? 9600);
        ports.append(...list.map((p) => h('option', { value: `serial:${p.path}@${baud}` }, p.label)));
      })
      .catch(() => ports.remove());
    const form = h(
      'form',
      { class: 'form', id: 'rx-form' },
      field('Name', name),
      field('Link (source)', source, 'two-col'),
      ports,
      field('Serial command set', template),
      field('Bandwidth (Hz)', bw),
      field('Rated max input (dBm)', maxIn),
      h(
        'div',
        { class: 'wide row' },
        save,
        s
          ? h(
              'button',
              {
                type: 'button',
                id: 'rx-new',
                onclick: () => ((state.selected = null), renderProfiles(), renderCalibration()),
              },
              'New profile',
            )
          : null,
        s
          ? h(
              'button',
              {
                type: 'button',
                id: 'rx-delete',
                onclick: () =>
                  void api
                    .call('deleteReceiver', { id: s.id })
                    .then(() => ((state.selected = null), reload()))
                    .catch((e) => say(err, e)),
              },
              'Delete',
            )
          : null,
      ),
      h('div', { class: 'wide' }, err),
    );
    form.addEventListener('submit', (ev) => {
      ev.preventDefault();
      err.textContent = '';
      void (async () => {
        try {
          const saved = await api.call('saveReceiver', {
            receiver: {
              ...(s ? { id: s.id, calibration: s.calibration, notes: s.notes } : {}),
              name: name.value,
              source: source.value,
              template: template.value || null,
              bandwidthHz: num(bw, 'Bandwidth'),
              maxInputDbm: num(maxIn, 'Rated max input'),
            },
          });
          state.selected = saved;
          notify('info', `Receiver "${saved.name}" saved`);
          await reload();
        } catch (e) {
          say(err, e);
        }
      })();
    });
    profiles.append(
      h('h2', {}, 'Receiver profiles'),
      state.receivers.length
        ? h(
            'div',
            { class: 'scroll short' },
            h(
              'table',
              {},
              h(
                'thead',
                {},
                h(
                  'tr',
                  {},
                  h('th', {}, 'Name'),
                  h('th', {}, 'Link'),
                  h('th', { class: 'num' }, 'Max dBm'),
                  h('th', {}, 'Calibration'),
                ),
              ),
              body,
            ),
          )
        : h('p', { class: 'hint' }, 'No profiles yet: add your receiver below.'),
      form,
    );
  }

  // ---- guided calibration --------------------------------------------------------------------
  const injections: {
    freqHz: number;
    generatorDbm: number;
    padDb: number;
    raw: number;
    n: number;
    spread: number;
  }[] = [];
  function renderCalibration(): void {
    clear(calib);
    calib.append(h('h2', {}, 'Guided calibration'));
    const s = state.selected;
    if (!s) {
      calib.append(h('p', { class: 'hint' }, 'Choose a receiver profile on the left to calibrate it.'));
      return;
    }
    const freq = h('input', { name: 'cal-freq', value: '7.1', inputmode: 'decimal' });
    const pad = h('input', { name: 'cal-pad', value: '40', inputmode: 'decimal' });
    const level = h('input', { name: 'cal-level', value: '-60', inputmode: 'decimal' });
    const err = h('div', { class: 'error-text', id: 'cal-error', role: 'alert' });
    const rows = h('tbody', { id: 'cal-rows' });
    const drawRows = () => {
      clear(rows);
      injections.forEach((x, i) =>
        rows.append(
          h(
            'tr',
            {},
            h('td', { class: 'num' }, dbm(x.generatorDbm)),
            h('td', { class: 'num' }, x.padDb.toFixed(1)),
            h('td', { class: 'num' }, dbm(x.generatorDbm - x.padDb)),
            h('td', { class: 'num' }, String(x.raw)),
            h('td', { class: 'num' }, String(x.spread)),
            h(
              'td',
              {},
              h(
                'button',
                { type: 'button', class: 'ghost', onclick: () => (injections.splice(i, 1), drawRows()) },
                'remove',
              ),
            ),
          ),
        ),
      );
    };
    const readBtn = h(
      'button',
      {
        type: 'button',
        id: 'cal-read',
        onclick: () =>
          void (async () => {
            err.textContent = '';
            readBtn.disabled = true;
            try {
              const f = num(freq, 'Frequency') * 1e6;
              const g = num(level, 'Generator level');
              const p = num(pad, 'Pad');
              if (g - p > s.maxInputDbm)
                throw new ApiError(
                  'EUNSAFE',
                  `${g} dBm through ${p} dB is ${g - p} dBm at the receiver, above its rated ${s.maxInputDbm} dBm`,
                );
              const r = await api.call('calibrationRead', { receiverId: s.id, freqHz: f, count: 10 });
              injections.push({ freqHz: f, generatorDbm: g, padDb: p, raw: r.raw, n: r.n, spread: r.spread });
              drawRows();
            } catch (e) {
              say(err, e);
            } finally {
              readBtn.disabled = false;
            }
          })(),
      },
      'Read the receiver',
    );
    const fitBtn = h(
      'button',
      {
        type: 'button',
        class: 'primary',
        id: 'cal-fit',
        onclick: () =>
          void (async () => {
            err.textContent = '';
            try {
              const r = await api.call('fitCalibration', { receiverId: s.id, injections, save: true });
              injections.length = 0;
              notify('info', `Calibration "${r.calibration.name}" saved to ${s.name}`);
              await reload();
            } catch (e) {
              say(err, e);
            }
          })(),
      },
      'Fit and save the table',
    );
    // A table made elsewhere (JSON as app/calibration stores it), or back to the R.1 default.
    const saveCal = async (calibration: unknown, what: string) => {
      err.textContent = '';
      try {
        await api.call('saveReceiver', {
          receiver: {
            id: s.id,
            name: s.name,
            source: s.source,
            template: s.template,
            calibration,
            bandwidthHz: s.bandwidthHz,
            maxInputDbm: s.maxInputDbm,
            notes: s.notes,
          },
        });
        notify('info', `${s.name}: ${what}`);
        await reload();
      } catch (e) {
        say(err, e);
      }
    };
    const calFile = h('input', { type: 'file', accept: '.json,application/json', id: 'cal-import' });
    calFile.addEventListener('change', () => {
      const file = calFile.files?.[0];
      if (!file) return;
      void file.text().then((text) => {
        let data: unknown;
        try {
          data = JSON.parse(text);
        } catch (e) {
          return say(err, new Error(`${file.name}: not a JSON file (${(e as Error).message})`));
        }
        void saveCal(data, `calibration imported from ${file.name}`);
      });
    });
    const calImport = h('label', { class: 'inline' }, 'Import a table (JSON)', calFile);
    const clearBtn = h(
      'button',
      {
        type: 'button',
        id: 'cal-clear',
        hidden: !s.calibration,
        onclick: () => void saveCal(null, 'back to the IARU R.1 default'),
      },
      'Use the R.1 default',
    );
    const cal = s.calibration;
    calib.append(
      h(
        'p',
        { class: 'hint' },
        `Calibration now: ${cal ? `${cal.name}, readings in ${cal.quantity}` : 'IARU R.1 default (S9 = −73 dBm below 30 MHz, 6 dB per S-unit)'}.`,
      ),
      ...(cal
        ? [
            h(
              'p',
              { class: 'hint', id: 'cal-table' },
              cal.bands
                .map(
                  (b) =>
                    `${b.fromHz / 1e6}–${b.toHz / 1e6} MHz: ${b.points.map((p) => `${p.raw} → ${dbm(p.dbm)} dBm`).join(', ')}`,
                )
                .join('; '),
            ),
          ]
        : []),
      h(
        'p',
        { class: 'caution' },
        'Use a signal generator, never the transmitter. Keep the level at the receiver below its rated maximum.',
      ),
      h(
        'div',
        { class: 'row' },
        field('Frequency (MHz)', freq),
        field('Pad (dB)', pad),
        field('Generator (dBm)', level),
        readBtn,
      ),
      h(
        'table',
        {},
        h(
          'thead',
          {},
          h(
            'tr',
            {},
            h('th', { class: 'num' }, 'Generator dBm'),
            h('th', { class: 'num' }, 'Pad dB'),
            h('th', { class: 'num' }, 'At receiver dBm'),
            h('th', { class: 'num' }, 'Reading'),
            h('th', { class: 'num' }, 'Spread'),
            h('th', {}, ''),
          ),
        ),
        rows,
      ),
      h('div', { class: 'row' }, fitBtn, calImport, clearBtn),
      err,
    );
    drawRows();
  }

  // ---- templates -----------------------------------------------------------------------------
  let chosen: TemplateEntry | null = null;
  function renderTemplates(): void {
    clear(templates);
    const list = h(
      'div',
      { class: 'tpl-list', id: 'tpl-list' },
      ...state.templates.map((e) =>
        h(
          'button',
          {
            type: 'button',
            class: chosen?.template.name === e.template.name ? 'on' : '',
            'data-template': e.template.name,
            onclick: () => ((chosen = e), renderTemplates()),
          },
          `${e.template.name}${e.builtin ? ' (built in)' : ''}`,
        ),
      ),
    );
    const t: SerialTemplate | null = chosen?.template ?? null;
    const inp = (name: string, value: string) => h('input', { name, value });
    const f = {
      name: inp('tpl-name', t ? (chosen?.builtin ? `${t.name}-copy` : t.name) : 'my-receiver'),
      description: inp('tpl-description', t?.description ?? ''),
      baud: inp('tpl-baud', String(t?.defaultBaud ?? 9600)),
      dataBits: h(
        'select',
        { name: 'tpl-databits' },
        ...[8, 7].map((b) => h('option', { value: b, selected: t?.dataBits === b }, String(b))),
      ),
      parity: h(
        'select',
        { name: 'tpl-parity' },
        ...['none', 'even', 'odd'].map((p) => h('option', { value: p, selected: t?.parity === p }, p)),
      ),
      stopBits: h(
        'select',
        { name: 'tpl-stopbits' },
        ...[1, 2].map((b) => h('option', { value: b, selected: t?.stopBits === b }, String(b))),
      ),
      terminator: inp('tpl-terminator', escapeControls(t?.terminator ?? '\r')),
      query: inp('tpl-query', escapeControls(t?.query ?? '')),
      response: inp('tpl-response', t?.response ?? '^(-?\\d+(?:\\.\\d+)?)$'),
      valueFormat: h(
        'select',
        { name: 'tpl-format' },
        ...['decimal', 'hex'].map((p) => h('option', { value: p, selected: t?.valueFormat === p }, p)),
      ),
      quantity: h(
        'select',
        { name: 'tpl-quantity' },
        ...[
          ['strength-db', 'dB relative to S9'],
          ['s-units', 'S-units'],
          ['raw', 'raw counts (needs a calibration)'],
          ['dbm', 'dBm'],
        ].map(([v, l]) => h('option', { value: v, selected: t?.quantity === v }, l)),
      ),
      scale: inp('tpl-scale', String(t?.scale ?? 1)),
      offset: inp('tpl-offset', String(t?.offset ?? 0)),
      setFreq: inp('tpl-setfreq', escapeControls(t?.setFrequency?.command ?? '')),
      ack: inp('tpl-ack', t?.setFrequency?.ack ?? ''),
      delay: inp('tpl-delay', String(t?.interCommandDelayMs ?? 0)),
      timeout: inp('tpl-timeout', String(t?.timeoutMs ?? 500)),
    };
    const err = h('div', { class: 'error-text', id: 'tpl-error', role: 'alert' });
    const collect = () => ({
      name: f.name.value.trim(),
      description: f.description.value,
      defaultBaud: num(f.baud, 'Baud'),
      dataBits: Number(f.dataBits.value),
      parity: f.parity.value,
      stopBits: Number(f.stopBits.value),
      terminator: unescapeControls(f.terminator.value, 'terminator'),
      query: unescapeControls(f.query.value, 'query'),
      response: f.response.value,
      valueFormat: f.valueFormat.value,
      quantity: f.quantity.value,
      scale: num(f.scale, 'Scale'),
      offset: num(f.offset, 'Offset'),
      setFrequency: f.setFreq.value.trim()
        ? {
            command: unescapeControls(f.setFreq.value, 'setFrequency.command'),
            ack: f.ack.value.trim() || null,
          }
        : null,
      init: t?.init ?? [],
      interCommandDelayMs: num(f.delay, 'Delay'),
      timeoutMs: num(f.timeout, 'Timeout'),
    });
    const save = h('button', { type: 'submit', class: 'primary', id: 'tpl-save' }, 'Save template');
    const exportLink = h('a', { id: 'tpl-export', class: 'button-like', hidden: !t }, 'Export JSON');
    if (t) {
      exportLink.setAttribute(
        'href',
        `data:application/json;charset=utf-8,${encodeURIComponent(JSON.stringify(t, null, 2))}`,
      );
      exportLink.setAttribute('download', `${t.name}.json`);
    }
    const importInput = h('input', { type: 'file', accept: '.json,application/json', id: 'tpl-import' });
    importInput.addEventListener('change', () => {
      const file = importInput.files?.[0];
      if (!file) return;
      void file.text().then(async (text) => {
        err.textContent = '';
        try {
          const saved = await api.call('saveTemplate', { template: JSON.parse(text), replace: false });
          notify('info', `Template "${saved.name}" imported`);
          chosen = null;
          await reload();
        } catch (e) {
          say(err, e instanceof SyntaxError ? new Error(`${file.name}: not a JSON file (${e.message})`) : e);
        }
      });
    });
    const form = h(
      'form',
      { class: 'form tpl-form', id: 'tpl-form' },
      field('Name', f.name),
      field('Description', f.description, 'two-col'),
      field('Default baud', f.baud),
      field('Data bits', f.dataBits),
      field('Parity', f.parity),
      field('Stop bits', f.stopBits),
      field('Terminator (\\r, \\n)', f.terminator),
      field('Level query', f.query),
      field('Reply pattern (number in ( ))', f.response, 'two-col'),
      field('Number written as', f.valueFormat),
      field('Value means', f.quantity),
      field('Scale', f.scale),
      field('Offset', f.offset),
      field('Set frequency ({hz}, {khz:.3}, {mhz})', f.setFreq),
      field('Its acknowledgement (pattern, empty: none)', f.ack),
      field('Pause between commands (ms)', f.delay),
      field('Reply timeout (ms)', f.timeout),
      h(
        'div',
        { class: 'wide row' },
        save,
        exportLink,
        h('label', { class: 'inline' }, 'Import JSON', importInput),
      ),
      h('div', { class: 'wide' }, err),
    );
    form.addEventListener('submit', (ev) => {
      ev.preventDefault();
      err.textContent = '';
      void (async () => {
        try {
          const saved = await api.call('saveTemplate', { template: collect() });
          notify('info', `Template "${saved.name}" saved`);
          await reload();
          chosen = state.templates.find((e) => e.template.name === saved.name) ?? null;
          renderTemplates();
        } catch (e) {
          say(err, e);
        }
      })();
    });
    templates.append(
      h('h2', {}, 'Serial command sets'),
      h(
        'p',
        { class: 'hint' },
        'How a receiver on a serial line is asked for its level and told its frequency. Built-in ones are ' +
          'examples: change one and save it under a new name. Export writes the JSON that import reads.',
      ),
      list,
      form,
    );
  }

  try {
    await reload();
  } catch (e) {
    notify('error', (e as Error).message);
  }
}
