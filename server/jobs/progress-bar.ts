/**
 * A one-line progress bar for a terminal (`brink screen` on stderr when stderr
 * is a TTY): `[#######---------]  42 %  candidate 3 of 50: ptj-1um-b07`, redrawn
 * in place at most ten times a second and cleared at the end.
 */
export interface ProgressBar {
  update: (fraction: number, stage: string) => void;
  /** clear the line (the output that follows starts on a clean line) */
  done: () => void;
}

export function progressBar(write: (text: string) => void, columns = 80, now: () => number = () => performance.now()): ProgressBar {
  let last = -Infinity;
  let drawn = false;
  const width = Math.max(10, Math.min(30, Math.floor(columns / 4)));
  return {
    update(fraction, stage) {
      const t = now();
      if (fraction < 1 && t - last < 100) return;
      last = t;
      const f = Math.min(1, Math.max(0, Number.isFinite(fraction) ? fraction : 0));
      const filled = Math.round(f * width);
      const head = `[${'#'.repeat(filled)}${'-'.repeat(width - filled)}] ${String(Math.floor(f * 100)).padStart(3)} %  `;
      const room = Math.max(0, columns - 1 - head.length);
      const text = stage.length > room ? `${stage.slice(0, Math.max(0, room - 1))}…` : stage;
      write(`\r${head}${text}\x1b[K`);
      drawn = true;
    },
    done() {
      if (drawn) write('\r\x1b[K');
      drawn = false;
    },
  };
}
