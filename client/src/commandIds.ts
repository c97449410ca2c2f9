// The extension's command ids with their palette titles, in one editor-free module so the
// manifest test can compare them with package.json's `contributes.commands`.

import { ClientCommands } from '../../server/src/lsp/protocol';

export const COMMAND_TITLES = {
  'gradientProbe.checkFile': 'Check Gradients in This File',
  'gradientProbe.checkWorkspace': 'Check Gradients in the Workspace',
  [ClientCommands.openReport]: 'Open the Gradient Report of an Op',
  'gradientProbe.copyRegressionTest': 'Copy Failing Case as a Regression Test',
  'gradientProbe.showOutput': 'Show the Log',
  'gradientProbe.restartServer': 'Restart the Language Server',
  [ClientCommands.goToOp]: 'Go to the Forward of This Backward',
} as const;

export type CommandId = keyof typeof COMMAND_TITLES;
