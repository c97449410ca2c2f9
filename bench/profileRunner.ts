// Profiles where a warm runner spends a check: starts the real runner script (dist/sandbox-child.js)
// under `node --cpu-prof`, sends it the same messages the RunnerPool sends for one benchmark op,
// and prints the functions with the most self time from the profile it writes.
// Prints the runner's CPU time per job too (Linux).
// Usage: node dist/bench/profileRunner.js KIND ELEMENTS JOBS [--no-profile] [--bug=COUNT] [--engine=warm|cold] [-- EXTRA_NODE_FLAGS...]
// (--no-profile times the jobs without the profiler; --bug seeds COUNT wrong elements (1e-4) in the
// backward; --engine forces the warm engine or an engine loaded per op context; extra flags try V8
// options on the runner).
import { fork } from 'node:child_process';
import { mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { bindingsOf, listOps } from '../server/src/core/checker';
import { DEFAULT_SETTINGS } from '../server/src/engine/settings';
import { Bundler } from '../server/src/sandbox/bundle';
import { CHILD_SCRIPT_NAME, ENGINE_SCRIPT_NAME, findBuiltAsset } from '../server/src/sandbox/assets';
import { runnerJobFields } from '../server/src/sandbox/jobTypes';
import type { ChildMessage, JobMessage } from '../server/src/sandbox/protocol';
import { median } from './floor';
import { benchOp, type OpKind } from './opSources';

interface ProfileNode {
  id: number;
  callFrame: { functionName: string; url: string; lineNumber: number };
  children?: number[];
}
interface CpuProfile {
  nodes: ProfileNode[];
  samples: number[];
  timeDeltas: number[];
}

/** Self time per function (name, script, line), largest first, in ms. */
export function selfTimes(profile: CpuProfile): { name: string; ms: number; share: number }[] {
  const byId = new Map<number, ProfileNode>();
  for (const n of profile.nodes) byId.set(n.id, n);
  const totals = new Map<string, number>();
  let all = 0;
  for (let i = 0; i < profile.samples.length; i++) {
    const node = byId.get(profile.samples[i]);
    const dt = (profile.timeDeltas[i] ?? 0) / 1000;
    all += dt;
    if (!node) continue;
    const f = node.callFrame;
    const key = `${f.functionName || '(anonymous)'} ${f.url.split('/').pop() ?? ''}:${f.lineNumber + 1}`;
    totals.set(key, (totals.get(key) ?? 0) + dt);
  }
  return [...totals.entries()].map(([name, ms]) => ({ name, ms, share: ms / all })).sort((a, b) => b.ms - a.ms);
}

/** User plus system CPU time of a process so far, in ms, from /proc (Linux); NaN elsewhere. */
function childCpuMs(pid: number | undefined): number {
  try {
    // Fields after the command name: state is field 3, utime 14 and stime 15, in clock ticks (100 a second on Linux).
    const fields = readFileSync(`/proc/${pid}/stat`, 'utf8').split(') ')[1].split(' ');
    return (Number(fields[11]) + Number(fields[12])) * 10;
  } catch {
    return NaN;
  }
}

async function main(): Promise<void> {
  const [kind, elementsText, jobsText] = process.argv.slice(2);
  const bugArg = process.argv.find((a) => a.startsWith('--bug='));
  const op = benchOp(kind as OpKind, Number(elementsText), bugArg ? { count: Number(bugArg.slice(6)), relative: 1e-4 } : undefined);
  const jobs = Number(jobsText ?? 10);
  const dir = mkdtempSync(join(tmpdir(), 'gradient-probe-profile-'));
  const file = join(dir, op.fileName);
  writeFileSync(file, op.text);
  const childScript = findBuiltAsset(CHILD_SCRIPT_NAME);
  const engineScript = findBuiltAsset(ENGINE_SCRIPT_NAME);
  if (!childScript || !engineScript) throw new Error('run the build first (dist/sandbox-child.js, dist/engine-in-sandbox.js)');
  const listing = listOps(file);
  const target = listing.ops[0];
  if (!target) throw new Error('no op found');
  const bundle = await new Bundler().bundle({ file, text: op.text, bindings: listing.ops.flatMap(bindingsOf) });
  if (!bundle.ok) throw new Error(bundle.message);
  const profDir = join(dir, 'prof');
  const profiling = !process.argv.includes('--no-profile');
  const dash = process.argv.indexOf('--');
  const extraFlags = dash >= 0 ? process.argv.slice(dash + 1) : [];
  const execArgv = [...(profiling ? ['--cpu-prof', `--cpu-prof-dir=${profDir}`] : []), ...extraFlags];
  const child = fork(childScript, [], { execArgv, stdio: ['ignore', 'ignore', 'inherit', 'ipc'] });
  // The next message that is not a step notice (the pool uses those only for its time limit).
  const next = (): Promise<ChildMessage> =>
    new Promise((resolve) => {
      const take = (m: unknown): void => {
        if ((m as ChildMessage).type === 'step') return;
        child.off('message', take);
        resolve(m as ChildMessage);
      };
      child.on('message', take);
    });
  await next(); // hello
  child.send({ type: 'init', engineCode: readFileSync(engineScript, 'utf8') });
  // The runner's own choice (RunnerPool's), unless --engine=warm or --engine=cold forces one.
  const engineArg = process.argv.find((a) => a.startsWith('--engine='))?.slice(9);
  const warmEngine = engineArg === undefined ? runnerJobFields({ bundleKey: '', bundleCode: '', op: target, settings: DEFAULT_SETTINGS }).warmEngine : engineArg === 'warm';
  const times: number[] = [];
  let cpuAfterFirst = NaN;
  for (let id = 1; id <= jobs; id++) {
    if (id === 2) cpuAfterFirst = childCpuMs(child.pid);
    const job: JobMessage = {
      type: 'job',
      id,
      bundleKey: bundle.key,
      bundleCode: id === 1 ? bundle.code : undefined,
      requestJson: JSON.stringify({ op: target, settings: DEFAULT_SETTINGS }),
      seed: DEFAULT_SETTINGS.seed,
      timeLimitMs: DEFAULT_SETTINGS.timeLimitMs,
      outputLimitChars: 65536,
      warmEngine,
    };
    child.send(job);
    const reply = await next();
    if (reply.type === 'result') {
      times.push(reply.elapsedMs);
      if (id === 1 && reply.ok) {
        const o = JSON.parse(reply.outcomeJson) as { verdict: string; calls: { forward: number; backward: number } };
        console.log(`verdict ${o.verdict}, ${o.calls.forward} forward and ${o.calls.backward} backward calls`);
      }
    }
  }
  // CPU time of the runner (every thread: V8's compiler and collector threads too) per job after
  // the first: on a machine shared with other work it moves far less than the elapsed times.
  const cpuPerJob = (childCpuMs(child.pid) - cpuAfterFirst) / (jobs - 1);
  const exited = new Promise((resolve) => child.once('exit', resolve));
  child.disconnect();
  await exited;
  const warm = times.slice(1);
  console.log(
    `${op.kind} ${op.shape}${extraFlags.length ? ` with ${extraFlags.join(' ')}` : ''}: median of jobs 2–${jobs} inside the runner ${median(warm).toFixed(1)} ms${profiling ? ' (profiled)' : ''}${cpuPerJob >= 0 ? `, runner CPU ${cpuPerJob.toFixed(1)} ms a job` : ''}`,
  );
  if (!profiling) {
    rmSync(dir, { recursive: true, force: true });
    return;
  }
  const profFile = readdirSync(profDir).find((f) => f.endsWith('.cpuprofile'));
  if (!profFile) throw new Error('no profile written');
  const profile = JSON.parse(readFileSync(join(profDir, profFile), 'utf8')) as CpuProfile;
  console.log(`${op.kind} ${op.shape}: ${jobs} jobs in one runner, elapsed inside the runner (ms): ${times.map((t) => t.toFixed(1)).join(' ')}`);
  for (const row of selfTimes(profile).slice(0, 25)) console.log(`${row.ms.toFixed(1).padStart(9)} ms ${(100 * row.share).toFixed(1).padStart(5)} %  ${row.name}`);
  rmSync(dir, { recursive: true, force: true });
}

main().catch((e: unknown) => {
  process.stderr.write(`${e instanceof Error ? (e.stack ?? e.message) : String(e)}\n`);
  process.exitCode = 1;
});
