import type { ProgressEvent } from '../result.js';

/**
 * A one-line progress bar on a terminal (stderr), silent when stderr is not a
 * TTY so scripts and logs stay clean.
 */
export function progressBar(stream: NodeJS.WriteStream, enabled = Boolean(stream.isTTY)) {
  let last = '';
  let lastAt = 0;
  return {
    update(p: ProgressEvent): void {
      if (!enabled) return;
      const now = Date.now();
      if (now - lastAt < 80 && p.fraction < 1) return;
      lastAt = now;
      const width = 28;
      const filled = Math.round(Math.min(1, Math.max(0, p.fraction)) * width);
      const pts = p.pointsTotal > 0 ? `  ${fmtCount(p.pointsRead)}/${fmtCount(p.pointsTotal)} points` : '';
      const line = `[${'#'.repeat(filled)}${'.'.repeat(width - filled)}] ${(p.fraction * 100).toFixed(0).padStart(3)}%  ${p.stage}${pts}`;
      if (line !== last) stream.write(`\r${line.padEnd(last.length)}`);
      last = line;
    },
    done(): void {
      if (enabled && last) stream.write('\n');
      last = '';
    },
  };
}

function fmtCount(n: number): string {
  return n >= 1e6 ? `${(n / 1e6).toFixed(1)}M` : n >= 1e3 ? `${(n / 1e3).toFixed(0)}k` : String(n);
}
