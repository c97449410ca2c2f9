// Builds the command line and environment of a runner process: permission flag where the
// runtime has one, heap limit, address-space limit through prlimit where it exists, and an
// environment that carries nothing of the caller's; and which of the optional limits to give up
// when a runner will not start under them; the isolation a started runner really has.
import { existsSync } from 'node:fs';
import { RESIDENT_HEADROOM_MB } from './memoryWatch';
import { COVERAGE_RUNNER_ARG } from './jobTypes';
import type { HelloMessage } from './protocol';
import { tellingLine } from './supervisedProcess';

/** Where util-linux's prlimit lives on Linux distributions that ship it. */
const PRLIMIT_PATH = '/usr/bin/prlimit';

/**
 * Address space a Node process needs before user code allocates anything, in MiB. Measured on
 * Node 20: a runner reserves ~0.73 GiB of virtual memory at start (VmSize), and the vm timeout
 * adds a watchdog thread; 1 GiB leaves room for those. (Measured during design: 512 MiB is too
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

/** Consecutive failed starts after which queued jobs fail instead of retrying forever. */
const MAX_START_FAILURES = 3;

/**
 * The optional limits runners start with (the permission flag, the address-space limit), given
 * up one at a time when a runner dies before it is ready, the one the error names first.
 */
export class RunnerStartPolicy {
  private usePermission: boolean;
  private useAddressLimit = true;
  private failures = 0;
  private readonly extraArgs: string[] | undefined;

  /**
   * `coverage`: runners that collect V8 block coverage (coverageSession.ts). Node 20's permission
   * model denies the inspector, so they start without it and serve only the separate coverage
   * run, never a verdict.
   */
  constructor(opts: { coverage?: boolean } = {}) {
    this.usePermission = opts.coverage !== true;
    this.extraArgs = opts.coverage === true ? [COVERAGE_RUNNER_ARG] : undefined;
  }

  command(childScript: string, memoryLimitMb: number): RunnerCommand {
    return runnerCommand({ childScript, memoryLimitMb, usePermission: this.usePermission, useAddressLimit: this.useAddressLimit, extraArgs: this.extraArgs });
  }

  started(): void {
    this.failures = 0;
  }

  /** A runner died before it was ready: a line for the log (try again), or why to give up. */
  failedStart(command: RunnerCommand, stderr: string, code: number | null, signal: NodeJS.Signals | null): { log: string } | { giveUp: string } | undefined {
    this.failures++;
    const why = tellingLine(stderr) ?? (signal ? `signal ${signal}` : `exit code ${code}`);
    const hasPermission = command.permissionFlag !== undefined && this.usePermission;
    const hasAddressLimit = command.addressSpaceLimitMb !== undefined && this.useAddressLimit;
    // A runtime that refuses the flag says "bad option"; one that reserves a large virtual-memory
    // cage (an editor's Electron) dies opaquely under the address-space limit.
    const blamesPermission = /permission|bad option/i.test(stderr);
    if (hasPermission && (blamesPermission || !hasAddressLimit)) {
      this.usePermission = false;
      return { log: `runner did not start with ${command.permissionFlag} (${why}); running without the permission model` };
    }
    if (hasAddressLimit) {
      this.useAddressLimit = false;
      return { log: `runner did not start under an address-space limit (${why}); relying on the memory poll` };
    }
    if (this.failures >= MAX_START_FAILURES) return { giveUp: `the runner process could not start: ${why}` };
    return undefined;
  }
}

/** What isolation the runners really have, as reported from inside the latest runner. */
export interface IsolationReport {
  /** Process id of the runner that reported (for diagnostics). */
  pid: number;
  permissionFlag: string | undefined;
  permissionActive: boolean;
  addressSpaceLimitMb: number | undefined;
  memoryLimitMb: number;
  nodeVersion: string;
  summary: string;
}

/** The isolation report of a runner from its hello (checked from inside) and its command line. */
export function isolationReport(hello: HelloMessage, command: RunnerCommand, memoryLimitMb: number): IsolationReport {
  const limit = command.addressSpaceLimitMb;
  const parts = [hello.isolation, `heap limit ${memoryLimitMb} MiB`];
  parts.push(limit ? `address space limit ${limit} MiB` : 'no address-space limit (prlimit not available)');
  parts.push(`resident memory watched (limit ${memoryLimitMb + RESIDENT_HEADROOM_MB} MiB)`);
  return {
    pid: hello.pid,
    permissionFlag: command.permissionFlag,
    permissionActive: hello.permissionActive,
    addressSpaceLimitMb: limit,
    memoryLimitMb,
    nodeVersion: hello.nodeVersion,
    summary: parts.join('; '),
  };
}
