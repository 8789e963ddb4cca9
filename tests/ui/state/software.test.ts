import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { SOFTWARE } from '../../../src/ui/state/software.ts';

describe('SOFTWARE', () => {
  it('SOFTWARE carries the version in package.json', () => {
    const pkg = JSON.parse(readFileSync(new URL('../../../package.json', import.meta.url), 'utf8')) as { version: string };
    expect(SOFTWARE.version).toBe(pkg.version);
    expect(SOFTWARE.name).toBe('Gapwise');
  });
});
