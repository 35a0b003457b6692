/**
 * The layering rules of DEVELOPERS.md ("Layout"), checked on the import graph of src/:
 * - only src/config/ reads process.env;
 * - only src/db/ imports the PostgreSQL driver (pg and its pg-* companions);
 * - a unit (a folder of src/) is imported from outside through its index.ts;
 * - stats/ and checks/ import nothing that does I/O: no node: module, no I/O package, no
 *   unit that talks to a database, a socket or a file;
 * - the units form no cycle (data flows one way).
 * The graph comes from the import and export declarations of every .ts file under src/,
 * type-only ones included (a type import couples units as much as a value import does),
 * and from dynamic imports of literal paths. Comments and strings are skipped by a small
 * scanner, so a commented-out import or an import in a string does not count.
 */
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { dirname, join, normalize, relative, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const SRC = fileURLToPath(new URL('../../src/', import.meta.url));

function walk(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const p = join(dir, name);
    return statSync(p).isDirectory() ? walk(p) : p.endsWith('.ts') ? [p] : [];
  });
}

/**
 * Code only: comments and the text of template literals blanked out, and every quoted
 * string replaced by a numbered placeholder ('#0', '#1', ...; the texts are in `strings`),
 * so that the import patterns below match neither comments nor text inside strings.
 */
function scan(text: string): { code: string; strings: string[] } {
  const strings: string[] = [];
  let out = '';
  let i = 0;
  const templateDepth: number[] = []; // brace depth at which each open template's ${ started
  let braces = 0;
  let lastSignificant = '';
  const regexCanStart = () => lastSignificant === '' || /[(,=:[!&|?{};+\-*%<>~^]$/.test(lastSignificant) || /\b(return|typeof|case|in|of|void|throw)$/.test(out.trimEnd());
  const readString = (quote: string) => {
    const start = ++i;
    while (i < text.length && text[i] !== quote) i += text[i] === '\\' ? 2 : 1;
    strings.push(text.slice(start, i));
    i++;
    out += `${quote}#${strings.length - 1}${quote}`;
  };
  const blank = (s: string) => s.replace(/[^\n]/g, ' ');
  const readTemplate = () => {
    // From just after ` (or after the } closing a ${...}) to the closing ` or the next ${.
    const start = i;
    while (i < text.length) {
      if (text[i] === '\\') i += 2;
      else if (text[i] === '`') {
        out += `${blank(text.slice(start, i))}\``;
        i++;
        return;
      } else if (text[i] === '$' && text[i + 1] === '{') {
        out += `${blank(text.slice(start, i))}\${`;
        i += 2;
        templateDepth.push(braces);
        braces++;
        return;
      } else i++;
    }
    out += blank(text.slice(start));
  };
  while (i < text.length) {
    const c = text[i]!;
    const next = text[i + 1];
    if (c === '/' && next === '/') {
      while (i < text.length && text[i] !== '\n') i++;
    } else if (c === '/' && next === '*') {
      const end = text.indexOf('*/', i + 2);
      const stop = end < 0 ? text.length : end + 2;
      out += blank(text.slice(i, stop));
      i = stop;
    } else if (c === "'" || c === '"') {
      readString(c);
      lastSignificant = c;
    } else if (c === '`') {
      out += c;
      i++;
      readTemplate();
      lastSignificant = '`';
    } else if (c === '/' && regexCanStart()) {
      const start = i++;
      let inClass = false;
      while (i < text.length && (inClass || text[i] !== '/')) {
        if (text[i] === '\\') i++;
        else if (text[i] === '[') inClass = true;
        else if (text[i] === ']') inClass = false;
        i++;
      }
      i++;
      out += text.slice(start, i);
      lastSignificant = '/';
    } else {
      if (c === '{') braces++;
      if (c === '}') {
        braces--;
        if (templateDepth.length > 0 && templateDepth.at(-1) === braces) {
          templateDepth.pop();
          out += c;
          i++;
          readTemplate();
          lastSignificant = '`';
          continue;
        }
      }
      out += c;
      if (!/\s/.test(c)) lastSignificant = c;
      i++;
    }
  }
  return { code: out, strings };
}

/** The module specifiers of a file's import and export declarations and literal dynamic imports. */
function specifiers(text: string): string[] {
  const { code, strings } = scan(text);
  return [...code.matchAll(STATIC), ...code.matchAll(DYNAMIC)].map((m) => strings[Number(m[2])]!);
}

interface Import {
  from: string; // file, relative to src/, with / separators
  specifier: string;
  /** The imported file relative to src/ for relative specifiers (may lie outside src/: ../demo-data). */
  target: string | null;
}

const STATIC = /(?:^|[;\n}])\s*(?:import|export)\s+(?:type\s+)?(?:[\w*${},\s]+?\s+from\s+)?(['"])#(\d+)\1/g;
const DYNAMIC = /\bimport\(\s*(['"])#(\d+)\1\s*\)/g;

function importsOf(file: string): Import[] {
  const from = relative(SRC, file).split(sep).join('/');
  return specifiers(readFileSync(file, 'utf8')).map((specifier) => ({
    from,
    specifier,
    target: specifier.startsWith('.') ? normalize(join(dirname(from), specifier)).split(sep).join('/') : null,
  }));
}

const files = walk(SRC);
const imports = files.flatMap(importsOf);
/** The unit of a file: its top folder under src/, or the file itself for src/*.ts. */
const unitOf = (path: string): string => (path.includes('/') ? path.split('/')[0]! : path);
const code = (file: string) => scan(readFileSync(file, 'utf8')).code;

describe('the scanner', () => {
  it('finds static, type-only, multi-line, re-export and dynamic imports, and skips comments and strings', () => {
    const text = [
      "import { a } from './a.ts';",
      "import type { B } from '../b/index.ts';",
      'import {\n  c,\n  d,\n} from "./c.ts";',
      "export * from './e.ts';",
      "export { f, type G } from './f.ts';",
      "import './side.ts';",
      "// import { no } from 'commented';",
      "/* import { no } from 'block'; */",
      "const s = \"import { no } from 'string'\"; const q = 'import(\"nor\")';",
      "const r = /'/g; const t = `x ${'${'} import('nope')`;",
      "const m = await import('./dyn.ts');",
      "const u = 'text/*' + '*/*'; import { late } from './late.ts';",
    ].join('\n');
    expect(specifiers(text).sort()).toEqual(['../b/index.ts', './a.ts', './c.ts', './dyn.ts', './e.ts', './f.ts', './late.ts', './side.ts']);
  });

  it('reads the whole of src/', () => {
    expect(files.length).toBeGreaterThan(50);
    expect(imports.filter((i) => i.from === 'cli.ts').map((i) => i.specifier)).toContain('./scheduler/index.ts');
  });
});

describe('layering rules (DEVELOPERS.md)', () => {
  it('only src/config/ reads process.env', () => {
    const readers = files.map((f) => relative(SRC, f).split(sep).join('/')).filter((f) => !f.startsWith('config/') && /\bprocess\.env\b/.test(code(join(SRC, f))));
    expect(readers).toEqual([]);
  });

  it('only src/db/ imports the PostgreSQL driver', () => {
    const outside = imports.filter((i) => /^pg($|-|\/)/.test(i.specifier) && !i.from.startsWith('db/')).map((i) => `${i.from} -> ${i.specifier}`);
    expect(outside).toEqual([]);
  });

  it('units are imported through their index.ts', () => {
    const deep = imports
      .filter((i) => i.target !== null && !i.target.startsWith('..') && i.target.includes('/'))
      .filter((i) => unitOf(i.target!) !== unitOf(i.from) && !i.target!.endsWith('/index.ts'))
      .map((i) => `${i.from} -> ${i.specifier}`);
    expect(deep).toEqual([]);
  });

  it('stats/ and checks/ import nothing that does I/O', () => {
    const ioUnits = new Set(['db', 'source', 'store', 'exporter', 'scheduler', 'statuspage', 'demo', 'runtime.ts', 'cli.ts', 'log.ts']);
    const pure = new Set(['simple-statistics']);
    const bad = imports
      .filter((i) => i.from.startsWith('stats/') || i.from.startsWith('checks/'))
      .filter((i) => (i.target === null ? !pure.has(i.specifier) : ioUnits.has(unitOf(i.target))))
      .map((i) => `${i.from} -> ${i.specifier}`);
    expect(bad).toEqual([]);
    const processUse = files.map((f) => relative(SRC, f).split(sep).join('/')).filter((f) => /^(stats|checks)\//.test(f) && /\bprocess\./.test(code(join(SRC, f))));
    expect(processUse).toEqual([]);
  });

  it('the units form no cycle', () => {
    const edges = new Map<string, Set<string>>();
    for (const i of imports) {
      if (i.target === null || i.target.startsWith('..')) continue;
      const a = unitOf(i.from);
      const b = unitOf(i.target);
      if (a === b) continue;
      if (!edges.has(a)) edges.set(a, new Set());
      edges.get(a)!.add(b);
    }
    // Every unit that can reach itself, with one path back to it.
    const cycles: string[] = [];
    for (const start of edges.keys()) {
      const seen = new Set<string>();
      const path = (node: string, trail: string[]): string[] | null => {
        for (const next of edges.get(node) ?? []) {
          if (next === start) return [...trail, next];
          if (seen.has(next)) continue;
          seen.add(next);
          const found = path(next, [...trail, next]);
          if (found !== null) return found;
        }
        return null;
      };
      const cycle = path(start, [start]);
      if (cycle !== null) cycles.push(cycle.join(' -> '));
    }
    expect(cycles).toEqual([]);
  });
});
