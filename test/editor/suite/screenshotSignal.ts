// The handshake between an in-editor suite and the host runner for the screenshot: the suite
// prints a marker, the runner photographs the page and then writes a flag file the suite waits for.

import { basename, dirname, join } from 'node:path';

/** Printed by a suite, followed by a name, when the editor shows what the runner should photograph. */
export const SCREENSHOT_MARKER = 'gradient-probe:screenshot-now';

/** The flag file of one named screenshot: beside the workspace folder, which stays unchanged. */
export function screenshotFlag(workspace: string, name: string): string {
  return join(dirname(workspace), `${basename(workspace)}.${name}.screenshot-taken`);
}

/** The screenshot name in a log line, if the line asks for one. */
export function screenshotRequest(line: string): string | undefined {
  const at = line.indexOf(SCREENSHOT_MARKER);
  if (at < 0) return undefined;
  return /^[\w-]+/.exec(line.slice(at + SCREENSHOT_MARKER.length).trim())?.[0];
}
