import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { defineConfig, type Plugin } from 'vite';
import { VitePWA } from 'vite-plugin-pwa';
import { CSP_META } from './csp.js';

const root = fileURLToPath(new URL('.', import.meta.url));
const pkg = JSON.parse(readFileSync(new URL('../package.json', import.meta.url), 'utf8')) as { version: string };
/** Shown in the app's header; CROWNTALLY_APP_VERSION overrides it (the update test builds two versions). */
const appVersion = process.env['CROWNTALLY_APP_VERSION'] ?? pkg.version;

/** Writes the Content-Security-Policy meta tag into the built page (not in dev, whose live reload needs inline styles). */
function cspMeta(): Plugin {
  return {
    name: 'crowntally-csp-meta',
    apply: 'build',
    transformIndexHtml: () => [{ tag: 'meta', attrs: { 'http-equiv': 'Content-Security-Policy', content: CSP_META }, injectTo: 'head-prepend' }],
  };
}

export default defineConfig({
  root,
  base: './',
  define: { __APP_VERSION__: JSON.stringify(appVersion) },
  build: {
    outDir: 'dist',
    emptyOutDir: true,
    target: 'es2022',
    // The app must run offline from its own files: nothing inlined as data: URLs (the CSP forbids them too).
    assetsInlineLimit: 0,
    chunkSizeWarningLimit: 4000,
  },
  worker: { format: 'es' },
  plugins: [
    cspMeta(),
    VitePWA({
      strategies: 'generateSW',
      registerType: 'prompt',
      injectRegister: false,
      manifest: {
        name: 'Crowntally field',
        short_name: 'Crowntally',
        description: 'Tree inventory from lidar point clouds, offline on the device.',
        start_url: './',
        scope: './',
        display: 'standalone',
        background_color: '#f6f4ec',
        theme_color: '#173f5f',
        icons: [
          { src: 'icon.svg', sizes: 'any', type: 'image/svg+xml', purpose: 'any' },
        ],
      },
      workbox: {
        // Everything the job needs offline: scripts, workers, the LAZ decoder's .wasm, styles, icons.
        globPatterns: ['**/*.{js,mjs,css,html,wasm,svg,png,webmanifest,json}'],
        maximumFileSizeToCacheInBytes: 32 * 1024 * 1024,
        // The worker starts its LAZ decode helpers from its own URL plus ?pool=1: serve them from the precache too.
        ignoreURLParametersMatching: [/^pool$/, /^utm_/],
        cleanupOutdatedCaches: true,
        navigateFallback: 'index.html',
        clientsClaim: false,
        skipWaiting: false,
      },
    }),
  ],
});
