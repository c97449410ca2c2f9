// The handshake between an in-editor suite and the host runner for the screenshot: the suite
// prints a marker, the runner photographs the page and then writes a flag file the suite waits for.

import { basename, dirname, join } from 'node:path';

/** Printed by a suite when the editor shows what the runner should photograph. */
export const SCREENSHOT_MARKER = 'gradient-probe:screenshot-now';

/** The flag file: beside the workspace folder, so the workspace itself does not change. */
export function screenshotFlag(workspace: string): string {
  return join(dirname(workspace), `${basename(workspace)}.screenshot-taken`);
}
