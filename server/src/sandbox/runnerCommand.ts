// Builds the command line and environment of a runner process: permission flag where the
// runtime has one, heap limit, address-space limit through prlimit where it exists, and an
// environment that carries nothing of the caller's.
import { existsSync } from 'node:fs';

/** Where util-linux's prlimit lives on Linux distributions that ship it. */
const PRLIMIT_PATH = '/usr/bin/prlimit';

/**
 * Address space a Node process needs before user code allocates anything, in MiB. Measured on
 * Node 20: a runner reserves ~0.73 GiB of virtual memory at start (VmSize), and the vm timeout
 * adds a watchdog thread; 1 GiB leaves room for those. (shared/design/sandbox.md: 512 MiB is too
 * small for Node to start, 2 GiB in total worked.)
 */
export const RUNTIME_ADDRESS_SPACE_MB = 1024;

/** Smallest address-space limit we ever set, in MiB (see RUNTIME_ADDRESS_SPACE_MB). */
export const MIN_ADDRESS_SPACE_MB = 2048;

export type PermissionFlag = '--permission' | '--experimental-permission' | undefined;

/** The permission flag this runtime accepts: `--permission` (Node ≥ 22.13/23.5), the Node 20 one, or none. */
export function detectPermissionFlag(): PermissionFlag {
  const flags = process.allowedNodeEnvironmentFlags;
  if (flags.has('--permission')) return '--permission';
  if (flags.has('--experimental-permission')) return '--experimental-permission';
  return undefined;
}

/** True when this process is the editor's Electron runtime in Node mode. */
export function runningUnderElectron(): boolean {
  return process.env.ELECTRON_RUN_AS_NODE === '1' || typeof process.versions.electron === 'string';
}

/**
 * The runner's environment: empty, so no secret or token of the caller reaches user code.
 * Under Electron, ELECTRON_RUN_AS_NODE=1 must stay, or process.execPath starts the editor.
 */
export function runnerEnvironment(): NodeJS.ProcessEnv {
  return runningUnderElectron() ? { ELECTRON_RUN_AS_NODE: '1' } : {};
}

export interface RunnerCommandOptions {
  childScript: string;
  memoryLimitMb: number;
  /** Use the permission flag (false after a runtime refused it). */
  usePermission: boolean;
  /** Use prlimit when it exists (false after it failed to start a runner). */
  useAddressLimit: boolean;
  /** Arguments for the runner script itself (after it on the command line). */
  extraArgs?: string[];
}

export interface RunnerCommand {
  command: string;
  args: string[];
  env: NodeJS.ProcessEnv;
  permissionFlag: PermissionFlag;
  addressSpaceLimitMb: number | undefined;
}

/** The address-space limit for a given memory limit, in MiB. */
export function addressSpaceLimitMb(memoryLimitMb: number): number {
  return Math.max(MIN_ADDRESS_SPACE_MB, Math.ceil(memoryLimitMb) + RUNTIME_ADDRESS_SPACE_MB);
}

export function runnerCommand(opts: RunnerCommandOptions): RunnerCommand {
  const permissionFlag = opts.usePermission ? detectPermissionFlag() : undefined;
  const nodeArgs: string[] = [];
  if (permissionFlag) {
    // Reading is limited to the runner script itself; writing, child processes, workers and
    // addons are denied by the flag alone.
    nodeArgs.push(permissionFlag, `--allow-fs-read=${opts.childScript}`);
  }
  // Lets the runner answer user code's import() itself (child.ts refuseDynamicImport); without
  // it Node 20 rejects with a host-realm error that leads back to the host's process.
  if (process.allowedNodeEnvironmentFlags.has('--experimental-vm-modules')) nodeArgs.push('--experimental-vm-modules');
  // The heap limit makes a runaway op die with a clear V8 "heap out of memory" instead of
  // swapping the machine; off-heap buffers are caught by the address-space limit and the
  // parent's memory poll.
  nodeArgs.push(`--max-old-space-size=${Math.max(16, Math.floor(opts.memoryLimitMb))}`, '--no-warnings', opts.childScript, ...(opts.extraArgs ?? []));
  const env = runnerEnvironment();
  const limitAddress = opts.useAddressLimit && process.platform === 'linux' && existsSync(PRLIMIT_PATH);
  if (limitAddress) {
    const limitMb = addressSpaceLimitMb(opts.memoryLimitMb);
    const bytes = limitMb * 1024 * 1024;
    return {
      command: PRLIMIT_PATH,
      args: [`--as=${bytes}`, '--', process.execPath, ...nodeArgs],
      env,
      permissionFlag,
      addressSpaceLimitMb: limitMb,
    };
  }
  return { command: process.execPath, args: nodeArgs, env, permissionFlag, addressSpaceLimitMb: undefined };
}
