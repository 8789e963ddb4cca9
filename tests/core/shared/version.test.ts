import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { GAPWISE_VERSION, SOFTWARE } from '../../../src/core/shared/version.ts';

describe('GAPWISE_VERSION', () => {
  const pkg = JSON.parse(readFileSync(resolve(import.meta.dirname, '../../../package.json'), 'utf8')) as { version: string };
  const changelog = readFileSync(resolve(import.meta.dirname, '../../../CHANGELOG.md'), 'utf8');

  it('GAPWISE_VERSION equals the version in package.json', () => {
    expect(GAPWISE_VERSION).toBe(pkg.version);
    expect(SOFTWARE).toBe(`Gapwise ${pkg.version}`);
  });

  it('GAPWISE_VERSION has its own heading in CHANGELOG.md', () => {
    expect(changelog).toContain(`## ${GAPWISE_VERSION} `);
  });
});
