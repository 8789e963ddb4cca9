// The function-length rule: no function in src/ (nor in the <script> of a .svelte component) runs over
// MAX_LINES lines unless ALLOWED names it with its reason. Every function is found by the TypeScript
// compiler's own parser: declarations, methods, accessors, constructors, arrow functions and function
// expressions; a function's length runs from the line of its first token to the line of its last.
import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative, resolve } from 'node:path';
import ts from 'typescript';

const SRC = resolve(__dirname, '..', 'src');
/** Longest a function may be, in lines (a split into named steps reads better beyond it). */
const MAX_LINES = 120;

/**
 * Functions allowed over MAX_LINES, as "path under src:name", each with its reason. Keep it short:
 * an entry leaves when its function is split (the second test below says when that has happened).
 */
const ALLOWED: Record<string, string> = {
};

interface FunctionSpan {
  /** Path under src/, with forward slashes. */
  file: string;
  /** Line of the function's first token in the file (1-based; in a .svelte file, of the whole file). */
  line: number;
  name: string;
  lines: number;
}

function sourceFiles(dir: string): string[] {
  return readdirSync(dir).flatMap((f) => {
    const p = join(dir, f);
    return statSync(p).isDirectory() ? sourceFiles(p) : /\.(ts|svelte)$/.test(f) ? [p] : [];
  });
}

/** The code to parse: a .ts file whole, a .svelte file's <script> blocks with the line each starts on. */
function scriptsOf(path: string): Array<{ text: string; firstLine: number }> {
  const text = readFileSync(path, 'utf8');
  if (!path.endsWith('.svelte')) return [{ text, firstLine: 0 }];
  return [...text.matchAll(/<script[^>]*>([\s\S]*?)<\/script>/g)].map((m) => {
    const start = (m.index as number) + m[0].indexOf('>') + 1;
    return { text: m[1], firstLine: text.slice(0, start).split('\n').length - 1 };
  });
}

function isFunction(node: ts.Node): node is ts.FunctionLikeDeclaration {
  return ts.isFunctionDeclaration(node) || ts.isMethodDeclaration(node) || ts.isArrowFunction(node) || ts.isFunctionExpression(node)
    || ts.isGetAccessorDeclaration(node) || ts.isSetAccessorDeclaration(node) || ts.isConstructorDeclaration(node);
}

/** A function's name as a reader looks for it: its own, else the variable or property it is assigned to. */
function nameOf(node: ts.FunctionLikeDeclaration): string {
  if (ts.isConstructorDeclaration(node)) return 'constructor';
  if (node.name) return node.name.getText();
  const parent = node.parent;
  if ((ts.isVariableDeclaration(parent) || ts.isPropertyAssignment(parent) || ts.isPropertyDeclaration(parent)) && parent.name) return parent.name.getText();
  return '(anonymous)';
}

/** Every function in one script (its text starts on line firstLine + 1 of `file`), with its length in lines. */
function functionsInScript(file: string, text: string, firstLine: number): FunctionSpan[] {
  const out: FunctionSpan[] = [];
  const source = ts.createSourceFile(file, text, ts.ScriptTarget.Latest, true, ts.ScriptKind.TS);
  const visit = (node: ts.Node): void => {
    if (isFunction(node)) {
      const first = source.getLineAndCharacterOfPosition(node.getStart(source)).line;
      const last = source.getLineAndCharacterOfPosition(node.getEnd()).line;
      out.push({ file, line: firstLine + first + 1, name: nameOf(node), lines: last - first + 1 });
    }
    ts.forEachChild(node, visit);
  };
  visit(source);
  return out;
}

/** Every function in one source file under src/. */
function functionsIn(path: string): FunctionSpan[] {
  const file = relative(SRC, path).split(/[\\/]/).join('/');
  return scriptsOf(path).flatMap((script) => functionsInScript(file, script.text, script.firstLine));
}

describe('function length', () => {
  const functions = sourceFiles(SRC).flatMap(functionsIn);
  const long = functions.filter((f) => f.lines > MAX_LINES);

  it('functionsInScript names each kind of function and counts its lines from first to last', () => {
    const text = [
      'export function plain(a: number): number {', // line 11 of the file
      '  return a;',
      '}',
      'const arrow = (x: number) =>',
      '  x + 1;',
      'class Store {',
      '  constructor() {}',
      '  get size(): number { return 0; }',
      '  add(v: number): void {',
      '    const inner = function () { return v; };',
      '    inner();',
      '  }',
      '}',
      'const options = { onDone: () => 1 };',
    ].join('\n');
    const spans = functionsInScript('x.ts', text, 10).map((f) => `${f.line} ${f.name} ${f.lines}`);
    expect(spans).toEqual(['11 plain 3', '14 arrow 2', '17 constructor 1', '18 size 1', '19 add 4', '20 inner 1', '24 onDone 1']);
  });

  it('finds the functions of the whole tree', () => {
    expect(functions.length).toBeGreaterThan(500);
    expect(functions.some((f) => f.file.endsWith('.svelte'))).toBe(true);
  });

  it(`no function in src is over ${MAX_LINES} lines unless ALLOWED gives its reason`, () => {
    const offenders = long
      .filter((f) => !Object.hasOwn(ALLOWED, `${f.file}:${f.name}`))
      .map((f) => `src/${f.file}:${f.line} ${f.name} is ${f.lines} lines; expected at most ${MAX_LINES} (split it into named steps, or add it to ALLOWED with a reason)`);
    expect(offenders).toEqual([]);
  });

  it('every ALLOWED entry has a reason and still names a function over the limit', () => {
    const longNames = new Set(long.map((f) => `${f.file}:${f.name}`));
    const stale = Object.entries(ALLOWED)
      .filter(([key, reason]) => !longNames.has(key) || reason.trim() === '')
      .map(([key, reason]) => (reason.trim() === '' ? `${key} has no reason` : `${key} is no longer over ${MAX_LINES} lines (or is gone); remove it from ALLOWED`));
    expect(stale).toEqual([]);
  });
});
