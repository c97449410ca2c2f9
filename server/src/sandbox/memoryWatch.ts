// Polls a runner's resident memory while it runs a job and reports when it passes a limit:
// the heap limit does not cover ArrayBuffers, and an address-space limit is not available
// everywhere (Linux only, and only where prlimit exists).
import { readFile } from 'node:fs/promises';

/** How often a busy runner's memory is read, in milliseconds: fine enough to stop a bomb early, cheap (a /proc read). */
export const MEMORY_POLL_INTERVAL_MS = 50;

/**
 * Resident memory a runner may use beyond its configured limit, in MiB: Node's own baseline
 * (~40 MiB measured on Node 20) plus the engine and bundle code. The heap limit itself is the
 * configured value, so a heap bomb meets V8's limit first and dies with a clearer message.
 */
export const RESIDENT_HEADROOM_MB = 256;

/** Resident set size of a process in MiB, or undefined where /proc is missing or the process is gone. */
export async function residentMb(pid: number): Promise<number | undefined> {
  try {
    const status = await readFile(`/proc/${pid}/status`, 'utf8');
    const match = /^VmRSS:\s+(\d+)\s+kB/m.exec(status);
    return match ? Number(match[1]) / 1024 : undefined;
  } catch {
    return undefined;
  }
}

/** Starts polling; calls onExceeded once with the measured MiB. Returns a stop function. */
export function watchMemory(pid: number, limitMb: number, onExceeded: (usedMb: number) => void): () => void {
  let stopped = false;
  let reading = false;
  const timer = setInterval(() => {
    if (reading || stopped) return;
    reading = true;
    void residentMb(pid).then((mb) => {
      reading = false;
      if (!stopped && mb !== undefined && mb > limitMb) {
        stopped = true;
        clearInterval(timer);
        onExceeded(mb);
      }
    });
  }, MEMORY_POLL_INTERVAL_MS);
  timer.unref();
  return () => {
    stopped = true;
    clearInterval(timer);
  };
}
