#!/usr/bin/env node
// The `gapwise` command. In a checkout (src/ present) it runs the TypeScript sources through tsx, so
// no build step is needed while developing; in the installed package it runs the compiled JavaScript
// of dist-cli/ (written by `npm run build`) with no loader.
import { existsSync } from 'node:fs';

const source = new URL('../src/cli/main.ts', import.meta.url);
let main;
if (existsSync(source)) {
  const { register } = await import('tsx/esm/api');
  register();
  ({ main } = await import(source.href));
} else {
  ({ main } = await import('../dist-cli/main.js'));
}
process.exitCode = await main(process.argv.slice(2));
