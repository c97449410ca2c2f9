// Workspace throughput and server memory: a generated workspace of 200 ops in 20 files checked
// with 1 and with 2 runner processes (Checker in this process, and the CLI end to end), and the
// language server's resident memory over 1,000 forced checks of one file.
import { execFileSync, spawn } from 'node:child_process';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { Checker } from '../server/src/core/checker';
import { DEFAULT_SETTINGS } from '../server/src/engine/settings';
import { median } from './floor';
import { lsp } from './lspClient';
import { ServerUnderTest } from './lspLatency';
import { benchOp, OP_KINDS } from './opSources';
import type { MemoryMeasurement, ThroughputMeasurement } from './results';

export const WORKSPACE_FILES = 20;
export const OPS_PER_FILE = 10;
/** Differentiated elements of the generated ops, in turn: a few ms to a few tens of ms each. */
const WORKSPACE_SIZES = [300, 1000, 3000];

/** Writes the workspace (20 files of 10 ops, every kind and size in turn) into dir/src. */
export function generateWorkspace(dir: string): string[] {
  const src = join(dir, 'src');
  mkdirSync(src, { recursive: true });
  const files: string[] = [];
  for (let f = 0; f < WORKSPACE_FILES; f++) {
    const parts: string[] = [];
    for (let o = 0; o < OPS_PER_FILE; o++) {
      const k = f * OPS_PER_FILE + o;
      const op = benchOp(OP_KINDS[k % OP_KINDS.length], WORKSPACE_SIZES[Math.floor(k / OP_KINDS.length) % WORKSPACE_SIZES.length]);
      const suffix = `_${o}`;
      // Every top-level name gets the op's suffix, so ten ops share one module.
      parts.push(op.text.replace(/\b(softplus|softplusBackward|matVec|matVecBackward|rowSoftmax|rowSoftmaxBackward|conv1d|conv1dBackward|GainLayer)\b/g, `$1${suffix}`));
    }
    const file = join(src, `ops${String(f).padStart(2, '0')}.ts`);
    writeFileSync(file, parts.join('\n'));
    files.push(file);
  }
  return files;
}

/** Jiffies of all CPUs from /proc/stat: [idle (idle + iowait), total]. */
function cpuJiffies(): [number, number] {
  try {
    const fields = readFileSync('/proc/stat', 'utf8').split('\n')[0].trim().split(/\s+/).slice(1).map(Number);
    return [fields[3] + fields[4], fields.reduce((a, b) => a + b, 0)];
  } catch {
    return [NaN, NaN];
  }
}

/** Share of the machine's CPU time left idle between two cpuJiffies() readings. */
function idleShare(before: [number, number], after: [number, number]): number {
  return (after[0] - before[0]) / (after[1] - before[1]);
}

async function checkAll(checker: Checker, files: string[]): Promise<Record<string, number>> {
  const verdicts: Record<string, number> = {};
  const results = await Promise.all(files.map((f) => checker.checkFile(f)));
  for (const r of results.flat()) verdicts[r.verdict] = (verdicts[r.verdict] ?? 0) + 1;
  return verdicts;
}

function runCli(cliPath: string, dir: string, workers: number): Promise<number> {
  return new Promise((resolve, reject) => {
    const t = performance.now();
    const p = spawn(process.execPath, [cliPath, 'check', dir, '--workers', String(workers), '--json'], { stdio: ['ignore', 'ignore', 'ignore'] });
    p.once('error', reject);
    p.once('exit', () => resolve(performance.now() - t));
  });
}

export async function measureThroughput(dir: string, runs: number): Promise<ThroughputMeasurement> {
  const files = generateWorkspace(dir);
  const checker: ThroughputMeasurement['checker'] = [];
  for (const workers of [1, 2]) {
    const c = new Checker({ settings: DEFAULT_SETTINGS, workers });
    try {
      c.warm();
      const verdicts = await checkAll(c, files); // bundles every file once, starts the runners
      const times: number[] = [];
      const idle: number[] = [];
      for (let r = 0; r < runs; r++) {
        const j = cpuJiffies();
        const t = performance.now();
        await checkAll(c, files);
        times.push(performance.now() - t);
        idle.push(idleShare(j, cpuJiffies()));
      }
      checker.push({ workers, runsMs: times, medianMs: median(times), verdicts, idleShare: median(idle) });
    } finally {
      await c.dispose();
    }
  }
  const cliPath = join(__dirname, 'cli.js');
  const cli: ThroughputMeasurement['cli'] = [];
  for (const workers of [1, 2]) {
    const times: number[] = [];
    for (let r = 0; r < Math.max(1, Math.ceil(runs / 2)); r++) times.push(await runCli(cliPath, dir, workers));
    cli.push({ workers, runsMs: times, medianMs: median(times) });
  }
  return {
    files: files.length,
    ops: files.length * OPS_PER_FILE,
    checker,
    cli,
    speedup: checker[0].medianMs / checker[1].medianMs,
    cliSpeedup: cli[0].medianMs / cli[1].medianMs,
  };
}

/** Resident set size of a process, in MiB (Linux /proc). */
function rssMb(pid: number): number {
  try {
    const m = /VmRSS:\s+(\d+) kB/.exec(readFileSync(`/proc/${pid}/status`, 'utf8'));
    return m ? Number(m[1]) / 1024 : NaN;
  } catch {
    return NaN;
  }
}

/** Sum of the resident memory of a process's children (the runners), in MiB. */
function childrenRssMb(pid: number): number {
  try {
    const out = execFileSync('ps', ['-o', 'rss=', '--ppid', String(pid)], { encoding: 'utf8' });
    return out
      .split('\n')
      .filter((l) => l.trim())
      .reduce((a, l) => a + Number(l.trim()) / 1024, 0);
  } catch {
    return NaN;
  }
}

/** 1,000 forced checks of one file over the LSP connection; RSS after every 100. */
export async function measureServerMemory(dir: string, checks: number): Promise<MemoryMeasurement> {
  const op = benchOp('elementwise', 1000);
  const file = join(dir, 'memory_op.ts');
  writeFileSync(file, op.text);
  const uri = pathToFileURL(file).toString();
  const server = new ServerUnderTest(dir, join(__dirname, 'cli.js'));
  const points: number[] = [];
  const serverRss: number[] = [];
  const runnerRss: number[] = [];
  try {
    await server.initialize(dir);
    const opened = server.nextFinished(uri);
    await server.connection.sendNotification(lsp.DidOpenTextDocumentNotification.type, { textDocument: { uri, languageId: 'typescript', version: 1, text: op.text } });
    await opened;
    for (let i = 1; i <= checks; i++) {
      const reply = (await server.connection.sendRequest('gradientProbe/checkOps', { uri, force: true })) as { results?: { verdict: string }[] };
      if (!reply.results || reply.results.length === 0) throw new Error(`check ${i} returned no result`);
      if (i % 100 === 0) {
        points.push(i);
        serverRss.push(rssMb(server.pid));
        runnerRss.push(childrenRssMb(server.pid));
      }
    }
  } finally {
    await server.stop();
  }
  const at100 = serverRss[points.indexOf(100)];
  const atEnd = serverRss[serverRss.length - 1];
  return { checks: points, serverRssMb: serverRss, runnerRssMb: runnerRss, growth100to1000: atEnd / at100 - 1 };
}
