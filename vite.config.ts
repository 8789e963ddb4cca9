import { defineConfig } from 'vitest/config';
import type { Plugin } from 'vite';
import { svelte } from '@sveltejs/vite-plugin-svelte';
import { offlineApp } from './pwa/build-service-worker.ts';

/**
 * The built app's Content-Security-Policy (a <meta> the build puts first in <head>; the dev server
 * goes without, as its live reload needs inline code and a websocket). Everything comes from the
 * app's own origin: scripts and workers (no 'unsafe-eval', no inline script; 'wasm-unsafe-eval' lets
 * the app compile its own WebAssembly linear-algebra kernel, bytes shipped inside its scripts — it
 * allows no JavaScript eval), styles, fonts, the
 * engine's requests. Images: the app's own files, data: (Leaflet's and the app's small images),
 * blob: (canvases turned into downloads), and https: for the opt-in background map, whose tile server
 * the user may choose freely (images cannot run code; plain http: tiles are refused). No plugins,
 * forms or <base>. IndexedDB (the autosave) and downloads are outside what CSP governs. The service
 * worker (dist/sw.js, from 'self' under worker-src) and the manifest (default-src 'self') need nothing more.
 */
export const CONTENT_SECURITY_POLICY = [
  "default-src 'self'",
  "script-src 'self' 'wasm-unsafe-eval'",
  "worker-src 'self'",
  "style-src 'self'",
  "img-src 'self' data: blob: https:",
  "connect-src 'self'",
  "font-src 'self'",
  "object-src 'none'",
  "base-uri 'none'",
  "form-action 'none'",
].join('; ');

/** Puts the policy in the built index.html's <head> right after the charset, before any script or style. */
function contentSecurityPolicy(): Plugin {
  return {
    name: 'gapwise-content-security-policy',
    apply: 'build',
    transformIndexHtml: {
      order: 'post',
      handler: (html) => html.replace(/(<head>\s*<meta charset="[^"]*"\s*\/?>)/i, `$1\n    <meta http-equiv="Content-Security-Policy" content="${CONTENT_SECURITY_POLICY}" />`),
    },
  };
}

export default defineConfig({
  base: './',
  plugins: [svelte(), contentSecurityPolicy(), offlineApp()],
  worker: { format: 'es' },
  server: { host: '127.0.0.1' },
  preview: { host: '127.0.0.1' },
  test: {
    include: ['tests/**/*.test.ts'],
    environment: 'node',
    testTimeout: 60_000,
    hookTimeout: 60_000,
  },
});
