import { build } from 'esbuild';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import path from 'node:path';
import { describe, expect, it } from 'vitest';

const root = path.resolve(import.meta.dirname, '..');
const require = createRequire(import.meta.url);

describe('the preload bundle', () => {
  it('is one CommonJS file that requires only electron, as a sandboxed preload must', async () => {
    // Electron docs, "Process Sandboxing": a sandboxed preload's require() offers only electron
    // (a subset), events, timers and url.
    const result = await build({
      absWorkingDir: root,
      entryPoints: ['main/preload.ts'],
      bundle: true,
      platform: 'node',
      format: 'cjs',
      external: ['electron'],
      write: false,
      metafile: true,
      logLevel: 'silent',
    });
    expect(result.outputFiles).toHaveLength(1);
    const code = result.outputFiles[0].text;
    const required = [...code.matchAll(/require\(["']([^"']+)["']\)/g)].map((m) => m[1]);
    expect([...new Set(required)]).toEqual(['electron']);
    expect(code).toContain('exposeInMainWorld');
    expect(code).not.toMatch(/\bimport\s/);
    // The contract's zod schemas stay in the main process: the preload imports types only.
    const inputs = Object.keys(result.metafile.inputs);
    expect(inputs.some((p) => p.includes('node_modules/zod'))).toBe(false);
    // ipcRenderer is used inside the preload, never handed to the page (checklist item 20).
    expect(code).not.toMatch(/exposeInMainWorld\([^)]*ipcRenderer\s*\)/);
  });
});

describe('electron-builder.yml', () => {
  // The reference is electron-builder's own JSON schema (node_modules/app-builder-lib/scheme.json),
  // checked with ajv; js-yaml reads the file (both installed with the toolchain).
  const yaml = require('js-yaml') as { load(text: string): unknown };
  const Ajv = require('ajv') as new (o: object) => {
    compile(s: object): ((d: unknown) => boolean) & { errors?: unknown };
  };
  const schema = JSON.parse(
    readFileSync(require.resolve('app-builder-lib/scheme.json', { paths: [root] }), 'utf8'),
  );
  const validate = new Ajv({ allErrors: true, strict: false }).compile(schema);
  interface BuilderConfig {
    appId: string;
    productName: string;
    directories: Record<string, string>;
    files: string[];
    mac: {
      category: string;
      hardenedRuntime: boolean;
      entitlements: string;
      extendInfo: Record<string, string>;
    };
    win: { target: string[] };
    linux: { target: string[]; category: string };
  }
  const config = yaml.load(readFileSync(path.join(root, 'electron-builder.yml'), 'utf8')) as BuilderConfig;

  it('is valid against electron-builder’s schema', () => {
    const ok = validate(config);
    expect(validate.errors ?? null).toBeNull();
    expect(ok).toBe(true);
  });

  it('the schema check does catch a broken config', () => {
    expect(validate({ ...config, mac: { ...config.mac, hardenedRuntime: 'yes please' } })).toBe(false);
  });

  it('sets the identity, outputs and platform blocks the app needs', () => {
    expect(config.appId).toBe('app.spanmeter.desktop');
    expect(config.productName).toBe('Spanmeter');
    expect(config.directories).toEqual({ output: 'dist', buildResources: 'build-resources' });
    expect(config.files).toEqual(expect.arrayContaining(['build/**', 'package.json']));
    // Apple's LSApplicationCategoryType values: "public.app-category.music".
    expect(config.mac.category).toBe('public.app-category.music');
    expect(config.mac.hardenedRuntime).toBe(true);
    expect(config.mac.extendInfo.NSMicrophoneUsageDescription).toBe(
      'Spanmeter listens to the oscillator connected to your audio interface to measure its pitch.',
    );
    expect(config.win.target).toEqual(['nsis']);
    expect(config.linux.target).toEqual(['AppImage']);
    // freedesktop.org Desktop Menu Specification, registered main category "Audio".
    expect(config.linux.category).toBe('Audio');
  });

  it('entitles audio input under the hardened runtime', () => {
    const plist = readFileSync(path.join(root, config.mac.entitlements), 'utf8');
    // Apple, "Hardened Runtime" → Resource Access: com.apple.security.device.audio-input.
    expect(plist).toMatch(/<key>com\.apple\.security\.device\.audio-input<\/key>\s*<true\/>/);
    expect(plist).toMatch(/<key>com\.apple\.security\.cs\.allow-jit<\/key>\s*<true\/>/);
  });

  it('package.json points Electron at the bundled main', () => {
    const pkg = JSON.parse(readFileSync(path.join(root, 'package.json'), 'utf8'));
    expect(pkg.main).toBe('build/main/main.cjs');
  });
});
