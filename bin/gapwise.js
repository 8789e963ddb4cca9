#!/usr/bin/env node
// The `gapwise` command. In a checkout (src/ and tsx present) it runs the TypeScript sources through
// tsx, so no build step is needed while developing; in the installed package (no src/) it runs the
// compiled JavaScript of dist-cli/ (written by `npm run build`) with no loader.
import { existsSync } from 'node:fs';

const source = new URL('../src/cli/main.ts', import.meta.url);
const compiled = new URL('../dist-cli/main.js', import.meta.url);

async function fromSource() {
  if (!existsSync(source)) return null;
  let tsx;
  try {
    tsx = await import('tsx/esm/api');
  } catch (e) {
    // Sources without the development tools (tsx): run the build instead when there is one.
    if (existsSync(compiled)) return null;
    throw e;
  }
  tsx.register();
  return (await import(source.href)).main;
}

const main = (await fromSource()) ?? (await import(compiled.href)).main;
process.exitCode = await main(process.argv.slice(2));
