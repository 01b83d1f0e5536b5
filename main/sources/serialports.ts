// Runs in Node. The serial ports of this machine, for the receivers dialog's link field: what the serialport
// package lists, merged with the stable names of /dev/serial/by-id (Linux: a name that stays with the
// adapter whichever ttyUSB number it gets today), the stable name preferred, each with a label a person can
// tell apart. Any other path (a socat pty) may still be typed.
import { readdirSync, realpathSync } from 'node:fs';
import { basename, join } from 'node:path';
import type { SerialPortEntry } from '../../app/api/receivers';

/** What serialport's SerialPort.list() gives for each port (the fields used here). */
export interface SystemPort {
  path: string;
  manufacturer?: string;
  serialNumber?: string;
  vendorId?: string;
  productId?: string;
}

export const BY_ID_DIR = '/dev/serial/by-id';

/** "usb-Bench_Labs_USB_Serial_QX17-if00-port0" → "Bench Labs USB Serial QX17" (interface kept when not 0). */
export function byIdLabel(name: string): string {
  const m = /^(?:usb|pci|platform)-(.+?)(?:-if(\d+))?(?:-port(\d+))?$/.exec(name);
  const core = (m ? m[1] : name).replace(/_/g, ' ').replace(/\\x20/g, ' ').trim();
  const iface = m?.[2] && m[2] !== '00' ? `, interface ${Number(m[2])}` : '';
  const port = m?.[3] && m[3] !== '0' ? `, port ${m[3]}` : '';
  return `${core}${iface}${port}`;
}

const ids = (p?: SystemPort) => (p?.vendorId && p.productId ? ` (USB ${p.vendorId}:${p.productId})` : '');

/**
 * The ports to offer: one entry per device, by its /dev/serial/by-id name where it has one (sorted by that
 * name), then the devices that have none (by path, ttyS2 before ttyS10). A listing that fails (no native
 * module, no udev) leaves the other source's entries.
 */
export async function listSerialPorts(
  opts: { byIdDir?: string; list?: () => Promise<SystemPort[]>; platform?: NodeJS.Platform } = {},
): Promise<SerialPortEntry[]> {
  const platform = opts.platform ?? process.platform;
  const list =
    opts.list ??
    (async () => {
      const { SerialPort } = await import('serialport');
      return SerialPort.list();
    });
  let system: SystemPort[] = [];
  try {
    system = await list();
  } catch {
    system = [];
  }
  const byDevice = new Map<string, SystemPort>();
  for (const p of system) byDevice.set(p.path, p);
  const out: SerialPortEntry[] = [];
  const named = new Set<string>();
  if (platform === 'linux') {
    const dir = opts.byIdDir ?? BY_ID_DIR;
    let names: string[] = [];
    try {
      names = readdirSync(dir).sort();
    } catch {
      names = []; // no adapter plugged in: udev has not made the folder
    }
    for (const name of names) {
      let device: string;
      try {
        device = realpathSync(join(dir, name));
      } catch {
        continue; // a link whose device is gone
      }
      if (named.has(device)) continue;
      named.add(device);
      const sys = byDevice.get(device);
      out.push({
        path: join(dir, name),
        device,
        stable: true,
        label: `${basename(device)} · ${byIdLabel(name)}${ids(sys)}`,
      });
    }
  }
  const rest = system
    .filter((p) => !named.has(p.path))
    .sort((a, b) => a.path.localeCompare(b.path, 'en', { numeric: true }));
  for (const p of rest) {
    const what = [p.manufacturer, p.serialNumber && `serial ${p.serialNumber}`].filter(Boolean).join(', ');
    out.push({
      path: p.path,
      device: p.path,
      stable: false,
      label: `${basename(p.path)}${what ? ` · ${what}` : ''}${ids(p)}`,
    });
  }
  return out;
}
