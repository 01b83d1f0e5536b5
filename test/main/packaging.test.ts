// The desktop package's configuration, held complete without building it (`electron-builder --dir` needs
// Electron's binary, which cannot be downloaded here): electron-builder.yml passes electron-builder's own
// schema, names what each target needs (deb: homepage and maintainer; the freedesktop categories; icons),
// leaves out the native build the desktop never loads, and the icons are what scripts/icons.mjs makes from
// renderer/icon.svg, at the sizes and in the formats each target takes (docs/design.md § Desktop shell and printing).
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { join } from 'node:path';
import { inflateSync } from 'node:zlib';
import { load } from 'js-yaml';
import { tempDir } from '../helpers/tmp';

const ROOT = join(import.meta.dirname, '..', '..');
/** The parts of electron-builder.yml this test reads (the schema check below covers the rest). */
interface BuilderConfig {
  appId: string;
  productName: string;
  files: string[];
  extraResources: { from: string; to: string }[];
  npmRebuild: boolean;
  asarUnpack: string[];
  linux: {
    target: string[];
    executableName: string;
    icon: string;
    category: string;
    maintainer: string;
    synopsis: string;
    description: string;
  };
  deb: { packageCategory: string };
  win: { target: string; icon: string };
  nsis: { installerIcon: string; uninstallerIcon: string; installerHeaderIcon: string };
  mac: { target: string; icon: string };
  dmg: { icon: string };
}
const config = load(readFileSync(join(ROOT, 'electron-builder.yml'), 'utf8')) as BuilderConfig;
const pkg = JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8'));
const res = (p: string) => join(ROOT, p);

// ---------------------------------------------------------------- icon formats, read by hand from their specs

/** PNG (ISO/IEC 15948 § 11.2.2): the signature, then IHDR's width and height; the pixels, inflated. */
function readPng(b: Buffer): { w: number; h: number; pixels: Buffer } {
  assert.deepEqual([...b.subarray(0, 8)], [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a], 'PNG signature');
  assert.equal(b.toString('latin1', 12, 16), 'IHDR', 'IHDR first');
  const idat: Buffer[] = [];
  for (let o = 8; o < b.length;) {
    const len = b.readUInt32BE(o);
    if (b.toString('latin1', o + 4, o + 8) === 'IDAT') idat.push(b.subarray(o + 8, o + 8 + len));
    o += 12 + len;
  }
  return { w: b.readUInt32BE(16), h: b.readUInt32BE(20), pixels: inflateSync(Buffer.concat(idat)) };
}

/** ICO: ICONDIR (reserved 0, type 1, count), 16-byte entries (0 means 256), each a PNG or a 32-bit DIB. */
function readIco(b: Buffer): { size: number; kind: 'png' | 'dib'; body: Buffer }[] {
  assert.equal(b.readUInt16LE(0), 0);
  assert.equal(b.readUInt16LE(2), 1, 'type 1 = icon');
  const out = [];
  for (let k = 0; k < b.readUInt16LE(4); k++) {
    const e = 6 + 16 * k;
    const size = b[e] || 256;
    assert.equal(b[e + 1] || 256, size, 'square');
    const body = b.subarray(b.readUInt32LE(e + 12), b.readUInt32LE(e + 12) + b.readUInt32LE(e + 8));
    assert.equal(body.length, b.readUInt32LE(e + 8), 'entry inside the file');
    if (body[0] === 0x89) {
      const p = readPng(body);
      assert.deepEqual([p.w, p.h], [size, size]);
      out.push({ size, kind: 'png' as const, body: p.pixels });
    } else {
      assert.equal(body.readUInt32LE(0), 40, 'BITMAPINFOHEADER');
      assert.deepEqual(
        [body.readInt32LE(4), body.readInt32LE(8), body.readUInt16LE(14)],
        [size, 2 * size, 32],
      );
      assert.equal(
        body.length,
        40 + size * size * 4 + Math.ceil(size / 32) * 4 * size,
        'pixels and AND mask',
      );
      out.push({ size, kind: 'dib' as const, body });
    }
  }
  return out;
}

/** ICNS: 'icns', the file's length, then chunks of type, length (with its 8-byte header), data. */
function readIcns(b: Buffer): Map<string, { w: number; pixels: Buffer }> {
  assert.equal(b.toString('latin1', 0, 4), 'icns');
  assert.equal(b.readUInt32BE(4), b.length, 'length is the whole file');
  const out = new Map<string, { w: number; pixels: Buffer }>();
  for (let o = 8; o < b.length; o += b.readUInt32BE(o + 4)) {
    const p = readPng(b.subarray(o + 8, o + b.readUInt32BE(o + 4)));
    assert.equal(p.w, p.h);
    out.set(b.toString('latin1', o, o + 4), { w: p.w, pixels: p.pixels });
  }
  return out;
}

/** RGBA of pixel (x, y) of an inflated filter-0 PNG image of width w. */
const rgba = (pixels: Buffer, w: number, x: number, y: number) => [
  ...pixels.subarray(y * (w * 4 + 1) + 1 + x * 4, y * (w * 4 + 1) + 5 + x * 4),
];

// -------------------------------------------------------------------------------------------------- config

describe('electron-builder configuration', () => {
  it("passes electron-builder's own schema (unknown or misplaced options are refused)", async () => {
    const req = createRequire(createRequire(import.meta.url).resolve('electron-builder'));
    const { validateConfiguration } = req('app-builder-lib/out/util/config/config') as {
      validateConfiguration(c: unknown, log: { isEnabled: boolean; add(): void }): Promise<void>;
    };
    const log = { isEnabled: false, add() {} };
    await validateConfiguration(config, log);
    await assert.rejects(
      validateConfiguration({ ...config, linux: { ...config.linux, maintainor: 'x' } }, log),
    );
  });

  it('names the app and its project: id, product name, homepage, author with address, description', () => {
    assert.match(config.appId, /^[a-z]+(\.[a-z0-9-]+){2,}$/, 'reverse-DNS application id');
    assert.equal(config.productName, 'Nullbench');
    assert.match(pkg.homepage, /^https:\/\/[\w.-]+/);
    assert.match(
      pkg.author?.email ?? '',
      /^[^@\s]+@[\w.-]+\.\w+$/,
      'the deb target needs the author with an email',
    );
    assert.ok(pkg.description.length > 20);
    assert.equal(pkg.desktopName, `${config.linux.executableName}.desktop`, 'window association on Linux');
    assert.equal(pkg.main, 'dist/electron/main.cjs');
    assert.ok(config.files.includes('dist/**'));
  });

  it('Linux: AppImage and deb, a maintainer, freedesktop categories Science and HamRadio, the PNG set', () => {
    assert.deepEqual([...config.linux.target].sort(), ['AppImage', 'deb']);
    assert.match(
      config.linux.maintainer,
      /^[^<>]+ <[^@\s]+@[\w.-]+>$/,
      'Debian Policy § 5.6.2: name <email>',
    );
    // Desktop Menu Specification, Appendix A: Science is a main category, HamRadio an additional one.
    const cats = config.linux.category.split(';').filter(Boolean);
    assert.ok(cats.includes('Science') && cats.includes('HamRadio'), config.linux.category);
    assert.match(config.linux.category, /;$/);
    assert.equal(config.deb.packageCategory, 'hamradio', "Debian's archive section for amateur radio");
    assert.ok(config.linux.synopsis && config.linux.description);
    const dir = res(config.linux.icon);
    const names = readdirSync(dir).sort();
    for (const s of [16, 24, 32, 48, 64, 128, 256, 512]) {
      assert.ok(names.includes(`${s}x${s}.png`), `${s}x${s}.png in ${config.linux.icon}`);
      const p = readPng(readFileSync(join(dir, `${s}x${s}.png`)));
      assert.deepEqual([p.w, p.h], [s, s], `${s}x${s}.png is ${p.w}×${p.h}`);
    }
  });

  it('Windows: NSIS with an .ico of 16, 24, 32, 48, 64, 128 and 256 px for the app, installer and uninstaller', () => {
    assert.equal(config.win.target, 'nsis');
    for (const f of [
      config.win.icon,
      config.nsis.installerIcon,
      config.nsis.uninstallerIcon,
      config.nsis.installerHeaderIcon,
    ])
      assert.equal(f, 'build-resources/icon.ico');
    const entries = readIco(readFileSync(res(config.win.icon)));
    assert.deepEqual(
      entries.map((e) => e.size),
      [16, 24, 32, 48, 64, 128, 256],
    );
    assert.equal(entries.find((e) => e.size === 256)!.kind, 'png', '256 px compressed, as Windows ships it');
  });

  it('macOS: DMG with an .icns holding 16 to 1024 px (icp4…ic14 PNG chunks)', () => {
    assert.equal(config.mac.target, 'dmg');
    assert.equal(config.dmg.icon, config.mac.icon);
    const icns = readIcns(readFileSync(res(config.mac.icon)));
    // Chunk types and pixel sizes from the ICNS format's type table (the @2x types hold twice their points).
    const want: [string, number][] = [
      ['icp4', 16],
      ['icp5', 32],
      ['icp6', 64],
      ['ic07', 128],
      ['ic08', 256],
      ['ic09', 512],
      ['ic10', 1024],
      ['ic11', 32],
      ['ic12', 64],
      ['ic13', 256],
      ['ic14', 512],
    ];
    assert.deepEqual([...icns.keys()].sort(), want.map(([t]) => t).sort());
    for (const [t, s] of want) assert.equal(icns.get(t)!.w, s, `${t} is ${s} px`);
  });

  it('leaves out the Node-ABI SQLite build: the desktop loads build/electron-native from its resources', () => {
    // electron-builder's files: the last pattern that matches a path decides; '!' excludes.
    const glob = (p: string) =>
      new RegExp(
        `^${p
          .replace(/[.+^${}()|[\]\\]/g, '\\$&')
          .replace(/\*\*/g, '\uE000')
          .replace(/\*/g, '[^/]*')
          .replace(/\uE000/g, '.*')}$`,
      );
    const matches = (patterns: string[], path: string) => {
      let inc = false;
      for (const p of patterns) {
        const neg = p.startsWith('!');
        if (glob(neg ? p.slice(1) : p).test(path)) inc = !neg;
      }
      return inc;
    };
    const packed = (path: string) => matches(config.files, path);
    // Production dependencies are packed by electron-builder itself; the patterns only take away from them.
    const packedAll = (path: string) =>
      matches(
        [
          ...config.files.filter((p) => !p.startsWith('!')),
          'node_modules/**',
          ...config.files.filter((p) => p.startsWith('!')),
        ],
        path,
      );
    assert.equal(packedAll('node_modules/better-sqlite3/build/Release/better_sqlite3.node'), false);
    assert.equal(packedAll('node_modules/better-sqlite3/deps/sqlite3/sqlite3.c'), false);
    assert.equal(packedAll('node_modules/better-sqlite3/lib/database.js'), true, 'its JavaScript stays');
    assert.equal(
      packedAll('node_modules/@serialport/bindings-cpp/prebuilds/linux-x64/node.napi.glibc.node'),
      true,
    );
    assert.equal(packed('dist/electron/main.cjs'), true);
    assert.equal(packed('dist/electron/main.cjs.map'), false);
    const extra = config.extraResources.find((r) => r.from === 'build/electron-native');
    assert.equal(extra?.to, 'electron-native');
    assert.match(
      readFileSync(res('main/shells/electron/main.ts'), 'utf8'),
      /resources && join\(resources, 'electron-native', 'better_sqlite3\.node'\)/,
    );
    assert.equal(config.npmRebuild, false, 'node_modules is never rebuilt in place for Electron');
    assert.ok(config.asarUnpack.includes('**/*.node'));
  });
});

// --------------------------------------------------------------------------------------------------- icons

describe('icons from one source', () => {
  it('scripts/icons.mjs makes exactly the committed icons again (same pixels, same structure)', () => {
    const t = tempDir('nullbench-icons-');
    try {
      const r = spawnSync(process.execPath, [res('scripts/icons.mjs'), t.dir], { encoding: 'utf8' });
      assert.equal(r.status, 0, r.stderr);
      assert.match(r.stdout, /11 icons written .* from .*renderer\/icon\.svg/);
      for (const name of readdirSync(res('build-resources/icons')))
        assert.deepEqual(
          readPng(readFileSync(join(t.dir, 'icons', name))),
          readPng(readFileSync(res(`build-resources/icons/${name}`))),
          name,
        );
      assert.deepEqual(
        readPng(readFileSync(join(t.dir, 'icon.png'))),
        readPng(readFileSync(res('build-resources/icon.png'))),
      );
      assert.deepEqual(
        readIco(readFileSync(join(t.dir, 'icon.ico'))),
        readIco(readFileSync(res('build-resources/icon.ico'))),
      );
      assert.deepEqual(
        readIcns(readFileSync(join(t.dir, 'icon.icns'))),
        readIcns(readFileSync(res('build-resources/icon.icns'))),
      );
    } finally {
      t.cleanup();
    }
  });

  it('draws renderer/icon.svg: its colours where its shapes are, transparent outside the rounded square', () => {
    const svg = readFileSync(res('renderer/icon.svg'), 'utf8');
    const hex = (h: string) => [1, 3, 5].map((i) => parseInt(h.slice(i, i + 2), 16));
    const bg = hex(/<rect[^>]*fill="(#\w{6})"/.exec(svg)![1]);
    const dot = hex(/<circle[^>]*fill="(#\w{6})"/.exec(svg)![1]);
    const trace = hex(/stroke="(#\w{6})"/.exec(svg)![1]);
    const [cx, cy] = /<circle cx="([\d.]+)" cy="([\d.]+)"/.exec(svg)!.slice(1).map(Number);
    const big = readPng(readFileSync(res('build-resources/icons/512x512.png')));
    const k = 512 / 32;
    assert.deepEqual(rgba(big.pixels, 512, 0, 0), [0, 0, 0, 0], 'corner outside the rounded square');
    assert.deepEqual(rgba(big.pixels, 512, 256, 128), [...bg, 255], 'background above the dip');
    assert.deepEqual(
      rgba(big.pixels, 512, Math.round(cx * k), Math.round(cy * k)),
      [...dot, 255],
      'the null marked',
    );
    assert.deepEqual(
      rgba(big.pixels, 512, Math.round(4 * k), Math.round(8 * k)),
      [...trace, 255],
      "the trace's start",
    );
  });

  it('refuses a source it cannot draw, saying what', () => {
    const t = tempDir('nullbench-icons-');
    try {
      const r = spawnSync(
        process.execPath,
        [
          '--input-type=module',
          '-e',
          `import { parseMark } from ${JSON.stringify(res('scripts/icons.mjs'))}; parseMark('<svg viewBox="0 0 32 32"><ellipse rx="3"/></svg>');`,
        ],
        { encoding: 'utf8', cwd: t.dir },
      );
      assert.notEqual(r.status, 0);
      assert.match(r.stderr, /<ellipse> is not one of the shapes drawn/);
    } finally {
      t.cleanup();
    }
    assert.ok(existsSync(res('renderer/icon.svg')));
  });
});
