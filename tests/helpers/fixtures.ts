// Loads an outside-reference fixture from tests/reference/. Each fixture JSON carries
// `source` (who computed it), `script` (the committed script that wrote it) and `tolerance`.
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';

export interface Fixture<T> {
  source: string;
  script: string;
  tolerance: { rel?: number; abs?: number };
  cases: T[];
  [key: string]: unknown;
}

export function loadFixture<T>(name: string): Fixture<T> {
  const path = resolve(__dirname, '..', 'reference', name);
  const f = JSON.parse(readFileSync(path, 'utf8')) as Fixture<T>;
  if (!f.source || !f.script || !f.tolerance) throw new Error(`Fixture ${name} lacks source, script or tolerance.`);
  return f;
}
