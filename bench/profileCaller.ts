// Where a warm check's time goes outside its runner: calls Checker.checkFile on one benchmark op
// file back to back, as opWorker.ts does, and splits each call's wall time at the job message's
// send and the reply's arrival (read off the real pool's send and reply handling), then times the
// host's steps alone. Prints one JSON line of medians in ms.
// Usage: node [--cpu-prof] dist/bench/profileCaller.js KIND ELEMENTS [REPS] [GAP_MS]
// (GAP_MS: idle time before each check, as in an editor between saves; default 0, back to back).
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { bindingsOf, Checker, listOps } from '../server/src/core/checker';
import { DEFAULT_SETTINGS } from '../server/src/engine/settings';
import type { OpResult } from '../server/src/model/types';
import { Bundler } from '../server/src/sandbox/bundle';
import { runnerJobFields } from '../server/src/sandbox/jobTypes';
import { RunnerPool } from '../server/src/sandbox/pool';
import { SupervisedProcess } from '../server/src/sandbox/supervisedProcess';
import { median } from './floor';
import { benchOp, type OpKind } from './opSources';

/** Warm-up checks before timing (the runner's host code and the engine's shared bytecode warm up). */
const WARMUP = 50;

/** Median ms of `reps` calls of `f`. */
function timeOf(reps: number, f: () => unknown): number {
  const ms: number[] = [];
  for (let r = 0; r < reps; r++) {
    const t = performance.now();
    f();
    ms.push(performance.now() - t);
  }
  return median(ms);
}

/** Records when the pool sends a message and when a job's reply arrives (wraps the real methods, bench only). */
function watchRoundTrip(): { sentAt: number; repliedAt: number } {
  const times = { sentAt: 0, repliedAt: 0 };
  const processProto = SupervisedProcess.prototype as unknown as { send: (message: object) => void };
  const send = processProto.send;
  processProto.send = function (this: unknown, message: object): void {
    times.sentAt = performance.now();
    send.call(this, message);
  };
  const poolProto = RunnerPool.prototype as unknown as { onResult: (...args: unknown[]) => void };
  const onResult = poolProto.onResult;
  poolProto.onResult = function (this: unknown, ...args: unknown[]): void {
    times.repliedAt = performance.now();
    onResult.apply(this, args);
  };
  return times;
}

async function main(): Promise<void> {
  const [kind, elementsText, repsText, gapText] = process.argv.slice(2);
  const op = benchOp(kind as OpKind, Number(elementsText));
  const reps = Number(repsText ?? 300);
  const gapMs = Number(gapText ?? 0);
  const dir = mkdtempSync(join(tmpdir(), 'gradient-probe-caller-'));
  const file = join(dir, op.fileName);
  writeFileSync(file, op.text);
  const checker = new Checker({ settings: DEFAULT_SETTINGS, workers: 1 });
  try {
    for (let w = 0; w < WARMUP; w++) await checker.checkFile(file);
    const times = watchRoundTrip();
    const wall: number[] = [];
    const runner: number[] = [];
    const beforeSend: number[] = [];
    const tripOutsideRunner: number[] = [];
    const afterReply: number[] = [];
    let last: OpResult | undefined;
    for (let r = 0; r < reps; r++) {
      if (gapMs > 0) await new Promise((done) => setTimeout(done, gapMs));
      const t = performance.now();
      last = (await checker.checkFile(file))[0];
      const end = performance.now();
      if (!last) throw new Error(`no op found in ${file}`);
      wall.push(end - t);
      runner.push(last.elapsedMs);
      beforeSend.push(times.sentAt - t);
      tripOutsideRunner.push(times.repliedAt - times.sentAt - last.elapsedMs);
      afterReply.push(end - times.repliedAt);
    }

    // The host's steps alone, on the same file (fresh parse and bundle lookup, no cache of the Checker's).
    const listing = listOps(file, op.text);
    const bindings = listing.ops.flatMap(bindingsOf);
    const bundler = new Bundler();
    const bundle = await bundler.bundle({ file, text: op.text, bindings });
    if (!bundle.ok) throw new Error(bundle.message);
    const lookups: number[] = [];
    for (let r = 0; r < WARMUP; r++) {
      const t = performance.now();
      await bundler.bundle({ file, text: op.text, bindings });
      lookups.push(performance.now() - t);
    }
    const job = { bundleKey: bundle.key, bundleCode: bundle.code, op: listing.ops[0]!, settings: DEFAULT_SETTINGS };
    const resultJson = JSON.stringify(last);
    const round = (x: number): number => Math.round(x * 1000) / 1000;
    const figures = {
      op: `${kind} ${op.elements}`,
      gapMs,
      checkMs: round(median(wall)),
      inRunnerMs: round(median(runner)),
      outsideRunnerMs: round(median(wall) - median(runner)),
      beforeSendMs: round(median(beforeSend)),
      tripOutsideRunnerMs: round(median(tripOutsideRunner)),
      afterReplyMs: round(median(afterReply)),
      parseMs: round(timeOf(WARMUP, () => listOps(file, op.text))),
      bundleLookupMs: round(median(lookups)),
      requestJsonMs: round(timeOf(WARMUP, () => runnerJobFields(job))),
      requestChars: runnerJobFields(job).requestJson.length,
      resultChars: resultJson.length,
      resultParseMs: round(timeOf(WARMUP, () => JSON.parse(resultJson))),
      discovery: checker.stats.discovery,
    };
    process.stdout.write(`${JSON.stringify(figures)}\n`);
  } finally {
    await checker.dispose();
    rmSync(dir, { recursive: true, force: true });
  }
}

main().catch((e: unknown) => {
  process.stderr.write(`${e instanceof Error ? (e.stack ?? e.message) : String(e)}\n`);
  process.exitCode = 1;
});
