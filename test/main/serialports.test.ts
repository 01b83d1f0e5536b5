// The serial-port picker's listing: the system's list merged with the stable names of a by-id folder (a
// made-up /dev here: device files and udev-style relative links), by-id names preferred, each with a label;
// and the service call that gives it to the receivers dialog.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { mkdirSync, symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { byIdLabel, listSerialPorts, type SystemPort } from '../../main/sources/serialports';
import { Service } from '../../main/service';
import { Store } from '../../main/store/store';
import { tempDb, tempDir } from '../helpers/tmp';

/** A /dev with ttyUSB0, ttyUSB1, ttyACM0 and a by-id folder linking to them as udev does (../../ttyUSB0). */
function fakeDev() {
  const t = tempDir('nullbench-dev-');
  const dev = join(t.dir, 'dev');
  const byId = join(dev, 'serial', 'by-id');
  mkdirSync(byId, { recursive: true });
  for (const d of ['ttyUSB0', 'ttyUSB1', 'ttyACM0', 'ttyS0', 'ttyS2', 'ttyS10'])
    writeFileSync(join(dev, d), '');
  symlinkSync('../../ttyUSB1', join(byId, 'usb-Bench_Labs_USB_Serial_QX17-if00-port0'));
  symlinkSync('../../ttyACM0', join(byId, 'usb-Kestrel_Radio_CAT_Port_0042-if02'));
  symlinkSync('../../ttyUSB7', join(byId, 'usb-Unplugged_Adapter_9-if00-port0')); // its device is gone
  const system: SystemPort[] = [
    { path: join(dev, 'ttyS10') },
    { path: join(dev, 'ttyUSB0'), manufacturer: 'Bench Labs', serialNumber: 'QX09' },
    { path: join(dev, 'ttyACM0'), manufacturer: 'Kestrel Radio', vendorId: '1d50', productId: '60fc' },
    {
      path: join(dev, 'ttyUSB1'),
      manufacturer: 'Bench Labs',
      serialNumber: 'QX17',
      vendorId: '0403',
      productId: '6015',
    },
    { path: join(dev, 'ttyS2') },
  ];
  return { dev, byId, system, cleanup: t.cleanup };
}

describe('serial ports for the link field', () => {
  it('prefers the by-id names (resolved to their device), then the rest in natural order, each labelled', async () => {
    const f = fakeDev();
    try {
      const ports = await listSerialPorts({ byIdDir: f.byId, list: async () => f.system, platform: 'linux' });
      assert.deepEqual(ports, [
        {
          path: join(f.byId, 'usb-Bench_Labs_USB_Serial_QX17-if00-port0'),
          device: join(f.dev, 'ttyUSB1'),
          stable: true,
          label: 'ttyUSB1 · Bench Labs USB Serial QX17 (USB 0403:6015)',
        },
        {
          path: join(f.byId, 'usb-Kestrel_Radio_CAT_Port_0042-if02'),
          device: join(f.dev, 'ttyACM0'),
          stable: true,
          label: 'ttyACM0 · Kestrel Radio CAT Port 0042, interface 2 (USB 1d50:60fc)',
        },
        { path: join(f.dev, 'ttyS2'), device: join(f.dev, 'ttyS2'), stable: false, label: 'ttyS2' },
        { path: join(f.dev, 'ttyS10'), device: join(f.dev, 'ttyS10'), stable: false, label: 'ttyS10' },
        {
          path: join(f.dev, 'ttyUSB0'),
          device: join(f.dev, 'ttyUSB0'),
          stable: false,
          label: 'ttyUSB0 · Bench Labs, serial QX09',
        },
      ]);
    } finally {
      f.cleanup();
    }
  });

  it('keeps the by-id names when the system list fails, and the system list when there is no by-id folder', async () => {
    const f = fakeDev();
    try {
      const failing = async (): Promise<SystemPort[]> => {
        throw new Error('no native module');
      };
      const only = await listSerialPorts({ byIdDir: f.byId, list: failing, platform: 'linux' });
      assert.deepEqual(
        only.map((p) => p.label),
        ['ttyUSB1 · Bench Labs USB Serial QX17', 'ttyACM0 · Kestrel Radio CAT Port 0042, interface 2'],
      );
      const none = await listSerialPorts({
        byIdDir: join(f.dev, 'absent'),
        list: async () => f.system,
        platform: 'linux',
      });
      assert.equal(none.length, 5);
      assert.ok(none.every((p) => !p.stable && p.path === p.device));
    } finally {
      f.cleanup();
    }
  });

  it('looks for by-id names on Linux only (COM ports come from the system list as they are)', async () => {
    const f = fakeDev();
    try {
      const com = [{ path: 'COM3', manufacturer: 'Bench Labs' }, { path: 'COM12' }, { path: 'COM4' }];
      const ports = await listSerialPorts({ byIdDir: f.byId, list: async () => com, platform: 'win32' });
      assert.deepEqual(
        ports.map((p) => [p.path, p.label]),
        [
          ['COM3', 'COM3 · Bench Labs'],
          ['COM4', 'COM4'],
          ['COM12', 'COM12'],
        ],
      );
    } finally {
      f.cleanup();
    }
  });

  it('makes by-id names readable', () => {
    assert.equal(byIdLabel('usb-Bench_Labs_USB_Serial_QX17-if00-port0'), 'Bench Labs USB Serial QX17');
    assert.equal(byIdLabel('usb-Bench_Labs_Dual_QX20-if01-port0'), 'Bench Labs Dual QX20, interface 1');
    assert.equal(byIdLabel('pci-Bench_Labs_Card-port3'), 'Bench Labs Card, port 3');
    assert.equal(byIdLabel('odd-name'), 'odd-name');
  });

  it('is a call of the service: {} in, a list out; an unknown argument refused by name', async () => {
    const db = tempDb();
    const store = new Store(db.file);
    const service = new Service({ store, mode: 'cli' });
    try {
      const r = (await service.call('listSerialPorts', {})) as { ok: boolean; value?: unknown };
      assert.equal(r.ok, true);
      assert.ok(Array.isArray(r.value));
      for (const p of r.value as { path: string; label: string }[]) assert.ok(p.path && p.label);
      const bad = (await service.call('listSerialPorts', { dir: '/tmp' })) as { ok: boolean; field?: string };
      assert.deepEqual([bad.ok, bad.field], [false, 'dir']);
    } finally {
      await service.close();
      store.close();
      db.cleanup();
    }
  });
});
