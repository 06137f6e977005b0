// The shape of dsp/ that docs/architecture.md promises: every module in a folder, every folder with an
// index.ts that says what it owns, no import cycles between modules, and no folder reaching up past its layer.
// The layer order is the one eslint enforces (DSP_LAYERS in eslint.config.js); this test reads the source
// itself, so a rule switched off in the lint config would still be caught here. Common practice, no source.
import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync, statSync } from 'node:fs';
import path from 'node:path';

const ROOT = path.resolve(import.meta.dirname, '..');
const DSP = path.join(ROOT, 'dsp');
const LAYERS = [
  'math',
  'format',
  'converter',
  'pitch',
  'io',
  'model',
  'advice',
  'calibration',
  'recording',
  'sim',
  'drive',
];

function modulesUnder(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const p = path.join(dir, name);
    if (statSync(p).isDirectory()) return modulesUnder(p);
    return name.endsWith('.ts') ? [p] : [];
  });
}

function importsOf(file: string): string[] {
  const src = readFileSync(file, 'utf8');
  return [...src.matchAll(/from\s+'(\.{1,2}\/[^']+)'/g)].map((m) => path.resolve(path.dirname(file), m[1]));
}

const folderOf = (file: string) => path.relative(DSP, file).split(path.sep)[0];

describe('dsp/ layout', () => {
  const modules = modulesUnder(DSP);

  it('has no module at the top of dsp/ and a folder for each layer, each with a documented index.ts', () => {
    expect(modules.filter((m) => path.dirname(m) === DSP)).toEqual([]);
    const folders = readdirSync(DSP).filter((n) => statSync(path.join(DSP, n)).isDirectory());
    expect(folders.sort()).toEqual([...LAYERS].sort());
    for (const f of folders) {
      const index = readFileSync(path.join(DSP, f, 'index.ts'), 'utf8');
      expect(index, `dsp/${f}/index.ts opens with a paragraph`).toMatch(/^\/\*\*\n \* \S/);
    }
  });

  it('imports another folder only through its index.ts, and only from a lower layer', () => {
    const wrong: string[] = [];
    for (const m of modules) {
      const from = folderOf(m);
      for (const target of importsOf(m)) {
        if (!target.startsWith(DSP + path.sep)) {
          wrong.push(`${path.relative(ROOT, m)} leaves dsp/ for ${path.relative(ROOT, target)}`);
          continue;
        }
        const to = folderOf(target);
        if (to === from) continue;
        if (path.basename(target) !== 'index.ts') wrong.push(`${path.relative(ROOT, m)} reaches into ${to}/`);
        if (LAYERS.indexOf(to) > LAYERS.indexOf(from))
          wrong.push(`${path.relative(ROOT, m)} imports ${to}/, a higher layer`);
      }
    }
    expect(wrong).toEqual([]);
  });

  it('has no import cycle between modules', () => {
    const graph = new Map(modules.map((m) => [m, importsOf(m)]));
    const state = new Map<string, 'open' | 'done'>();
    const cycles: string[] = [];
    const stack: string[] = [];
    const visit = (m: string) => {
      state.set(m, 'open');
      stack.push(m);
      for (const d of graph.get(m) ?? []) {
        if (state.get(d) === 'open') {
          cycles.push([...stack.slice(stack.indexOf(d)), d].map((p) => path.relative(DSP, p)).join(' → '));
        } else if (!state.has(d)) visit(d);
      }
      stack.pop();
      state.set(m, 'done');
    };
    for (const m of modules) if (!state.has(m)) visit(m);
    expect(cycles).toEqual([]);
  });
});
