// V8 block coverage inside a coverage runner (a runner started with COVERAGE_RUNNER_ARG): an
// inspector session of the runner's own isolate, started before any bundle is compiled, reset
// before each job and read after it. The session lives in the runner's host realm; user code in
// the vm context never gets a reference to it.
//
// Node 20's permission model denies the inspector entirely (Session.connect throws
// ERR_ACCESS_DENIED, NODE_V8_COVERAGE writes nothing, --inspect is ignored; checked on 20.20), so
// coverage runners are started without the permission flag and run a second, separate pass:
// verdicts always come from the runners that have it (core/checker.ts).
import { Session } from 'node:inspector';
import type { BlockCoverage } from './jobTypes';

export { COVERAGE_RUNNER_ARG } from './jobTypes';

/** The filename every bundle script is compiled under (child.ts). */
const BUNDLE_URL = 'user-bundle.js';

interface V8Range {
  startOffset: number;
  endOffset: number;
  count: number;
}
interface V8Function {
  functionName: string;
  ranges: V8Range[];
}
interface V8Script {
  url: string;
  functions: V8Function[];
}

export class CoverageSession {
  private readonly session = new Session();

  constructor() {
    this.session.connect();
    // callCount: true (not binary): in binary mode V8 leaves out functions it already reported
    // as run, so a second job's result would miss them (checked on Node 20).
    this.post('Profiler.enable');
    this.post('Profiler.startPreciseCoverage', { callCount: true, detailed: true });
  }

  /** Zeroes every counter (taking coverage resets them); called right before a job's user code runs. */
  reset(): void {
    this.post('Profiler.takePreciseCoverage');
  }

  /**
   * The block ranges of the one bundle that ran since reset(), with offsets counted from the
   * start of the bundle's own code (`prefixLength` characters of wrapper removed); undefined when
   * no bundle or more than one bundle ran (then nothing trustworthy can be said).
   */
  take(prefixLength: number, codeLength: number): BlockCoverage | undefined {
    const taken = this.post('Profiler.takePreciseCoverage') as { result?: V8Script[] } | undefined;
    let mine: V8Script | undefined;
    for (const script of taken?.result ?? []) {
      if (script.url !== BUNDLE_URL) continue;
      // The script's own top-level function starts at 0; only the bundle evaluated in this job ran it.
      const top = script.functions.find((f) => f.ranges[0]?.startOffset === 0);
      if (!top || (top.ranges[0]?.count ?? 0) === 0) continue;
      if (mine) return undefined;
      mine = script;
    }
    if (!mine) return undefined;
    const functions: BlockCoverage['functions'] = [];
    for (const fn of mine.functions) {
      const ranges: Array<[number, number, number]> = [];
      for (const r of fn.ranges) {
        const start = Math.max(0, r.startOffset - prefixLength);
        const end = Math.min(codeLength, r.endOffset - prefixLength);
        if (end > start) ranges.push([start, end, r.count]);
      }
      if (ranges.length > 0) functions.push({ name: fn.functionName, ranges });
    }
    return { functions };
  }

  /** Posts one message; the in-thread session answers synchronously (checked on Node 20). */
  private post(method: string, params?: Record<string, unknown>): unknown {
    let answer: unknown;
    let failure: Error | null = null;
    this.session.post(method, params, (err, result) => {
      failure = err;
      answer = result;
    });
    if (failure) throw failure;
    return answer;
  }
}
