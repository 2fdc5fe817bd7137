/**
 * The app's Web Worker script: the library's browser worker, given the URL
 * of the LAZ decoder's .wasm as bundled (so it is precached and loads
 * offline) and the built-in invented scenarios.
 */
import wasmUrl from 'laz-perf/lib/web/laz-perf.wasm?url';
import { startBrowserWorker } from '../../lib/worker/browser-entry.js';

startBrowserWorker({
  wasmUrl: new URL(wasmUrl, self.location.href),
  demo: async (kind) => (await import('../../demo/index.js')).generateSurvey(kind).las,
});
