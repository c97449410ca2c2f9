// Formats a BenchReport as the text `npm run bench` prints: machine, the op table (check,
// floor, hand-written loop, ratios and growth), seeded-bug trials, latency, throughput, memory
// and the goals with met / not met. Also used to paste the table into bench/PERFORMANCE.md.
import { FLOOR_FULL_RUN_MS } from './floor';
import { floorRatio, handSpeedup } from './goals';
import type { BenchReport, OpMeasurement } from './results';

/** A Markdown table; the first `textColumns` columns are left-aligned, the rest (figures) right-aligned. */
function table(head: string[], rows: string[][], textColumns = 2): string {
  const widths = head.map((h, c) => Math.max(h.length, ...rows.map((r) => (r[c] ?? '').length)));
  const left = (c: number): boolean => c < textColumns;
  const line = (cells: string[]): string => `| ${cells.map((x, c) => (left(c) ? x.padEnd(widths[c]) : x.padStart(widths[c]))).join(' | ')} |`;
  return [line(head), `|${widths.map((w, c) => (left(c) ? `-${'-'.repeat(w)}-` : `-${'-'.repeat(w)}:`)).join('|')}|`, ...rows.map(line)].join('\n');
}

const n = (x: number): string => x.toLocaleString('en-US');
const ms = (x: number): string => (x >= 10_000 ? `${(x / 1000).toFixed(1)} s` : x >= 100 ? x.toFixed(0) : x >= 1 ? x.toFixed(1) : x.toFixed(2));
const ratio = (x: number): string => (x >= 100 ? x.toFixed(0) : x >= 10 ? x.toFixed(1) : x.toFixed(2));

/** Exponent of the check's time against size between two consecutive sizes of one kind. */
function growth(prev: OpMeasurement | undefined, m: OpMeasurement): string {
  if (!prev) return '';
  return (Math.log(m.check.medianMs / prev.check.medianMs) / Math.log(m.elements / prev.elements)).toFixed(2);
}

export function opTable(r: BenchReport): string {
  const rows: string[][] = [];
  let prev: OpMeasurement | undefined;
  for (const m of r.ops) {
    if (prev && prev.kind !== m.kind) prev = undefined;
    rows.push([
      m.kind,
      m.shape,
      n(m.elements),
      m.methods.length === 0 ? '—' : `${m.methods.map((x) => x.split(':')[1]).join('+')}${m.coverage < 1 ? ` (${(100 * m.coverage).toFixed(2)} %)` : ''}`,
      m.verdict,
      `${m.calls.forward}/${m.calls.backward}`,
      `${m.floor.calls.forwards}/${m.floor.calls.backwards}`,
      `${ms(m.floor.medianMs)}${m.floor.fromPerCall ? '†' : ''}`,
      ms(m.check.medianMs),
      ms(m.check.runnerMedianMs),
      ratio(floorRatio(m)),
      `${ms(m.hand.totalMs)}${m.hand.extrapolated ? '*' : ''}`,
      ratio(handSpeedup(m)),
      growth(prev, m),
    ]);
    prev = m;
  }
  return table(
    [
      'op',
      'shape',
      'elements',
      'method',
      'verdict',
      'check calls F/B',
      'floor calls F/B',
      'floor ms',
      'check ms',
      'in runner ms',
      'check ÷ floor',
      'hand loop ms',
      'hand ÷ check',
      'growth',
    ],
    rows,
  );
}

export function detectionTable(r: BenchReport): string {
  return table(
    ['op', 'bug', 'elements', 'trials', 'caught', 'located', '95 % lower bound', 'median ms', 'max ms', 'method'],
    r.detection.map((d) => [
      d.kind,
      `${d.bugCount} element${d.bugCount > 1 ? 's' : ''} × (1 + ${d.bugRelative})`,
      n(d.elements),
      String(d.trials),
      `${d.caught}${
        Object.keys(d.missed).length
          ? ` (${Object.entries(d.missed)
              .map(([v, c]) => `${c} ${v}`)
              .join(', ')})`
          : ''
      }`,
      String(d.located),
      d.lowerBound95.toFixed(3),
      ms(d.medianMs),
      ms(d.maxMs),
      d.methods.map((x) => x.split(':')[1]).join('+'),
    ]),
  );
}

export function formatReport(r: BenchReport): string {
  const out: string[] = [];
  const mc = r.machine;
  out.push(`Gradient Probe benchmark, ${r.startedAt}`);
  out.push(
    `machine: ${mc.cpu}, ${mc.cores} cores (nproc), ${mc.memory} memory (free -h), ${mc.platform}, node ${mc.node}; load average before ${mc.loadBefore.map((x) => x.toFixed(2)).join(' ')}, after ${mc.loadAfter.map((x) => x.toFixed(2)).join(' ')}`,
  );
  out.push(`source: commit ${r.source.commit}${r.source.modified.length ? ` plus uncommitted changes in ${r.source.modified.join(', ')}` : ''}`);
  out.push(`settings of the op checks: ${JSON.stringify(r.settings)} (server/src/engine/settings.ts defaults unless a --settings run says otherwise)`);
  if (r.ops.length) {
    const reps = [...new Set(r.ops.map((m) => m.check.wallMs.length))].join('/');
    out.push('');
    const warm = [...new Set(r.ops.map((m) => m.check.warmupRuns ?? 0))].join('/');
    out.push(`Ops (each size in its own process; check = Checker.checkFile wall time, median of ${reps} runs after one cold run and ${warm} untimed warm-up runs;`);
    out.push("floor = the forward/backward calls the picked method needs, timed directly on the same bundle in a vm context set up like the runner's, median;");
    out.push(`† = floor above ${FLOOR_FULL_RUN_MS / 1000} s: call count × median time of one call instead of a timed run of every call;`);
    out.push(
      'hand loop = per-element central difference, fixed step 1e-6, over a scalar projection, the median of up to 5 complete runs; * = extrapolated (one run) from the elements reached in the time budget;',
    );
    out.push('growth = exponent of check time against elements from the previous size)');
    out.push(opTable(r));
  }
  if (r.detection.length) {
    out.push('');
    out.push('Seeded bugs (default settings; one seed per trial moves the bug; 95 % lower bound: one-sided Clopper–Pearson, ≈ 1 − 3/N for 0 misses, the rule of three)');
    out.push(detectionTable(r));
  }
  if (r.latency.length) {
    out.push('');
    out.push('Editor latency over LSP (node dist/bench/cli.js lsp --stdio, the CLI of bin/gradient-probe.js; edit + didSave → publishDiagnostics of the finished check)');
    out.push(
      table(
        ['file', 'ops', 'spawn → initialized', 'cold didOpen → diagnostics', 'first save', 'warm saves median', 'warm p90'],
        r.latency.map((l) => [l.file, String(l.ops), ms(l.coldStartMs), ms(l.coldOpenMs), ms(l.firstSaveMs), ms(l.warmMedianMs), ms(l.warmP90Ms)]),
        1,
      ),
    );
  }
  if (r.throughput) {
    const t = r.throughput;
    out.push('');
    out.push(`Workspace: ${t.ops} ops in ${t.files} files (generated)`);
    out.push(
      table(
        ['how', 'workers', 'runs (ms)', 'median ms', 'machine idle'],
        [
          ...t.checker.map((c) => [
            'Checker, warm runners, all files in flight',
            String(c.workers),
            c.runsMs.map(ms).join(' '),
            ms(c.medianMs),
            c.idleShare === undefined ? '' : `${(100 * c.idleShare).toFixed(0)} %`,
          ]),
          ...t.cli.map((c) => ['CLI end to end (check DIR --workers N --json)', String(c.workers), c.runsMs.map(ms).join(' '), ms(c.medianMs), '']),
        ],
        1,
      ),
    );
  }
  if (r.memory) {
    const m = r.memory;
    out.push('');
    out.push('Server memory over forced checks of one file (gradientProbe/checkOps, RSS from /proc)');
    out.push(
      table(
        ['after checks', 'server RSS MiB', 'runners RSS MiB'],
        m.checks.map((c, i) => [String(c), m.serverRssMb[i].toFixed(1), m.runnerRssMb[i].toFixed(1)]),
      ),
    );
  }
  if (r.goals.length) {
    out.push('');
    const verdict = (g: { met: boolean | null } | undefined): string => (g === undefined ? 'not measured' : g.met === null ? 'n/a' : g.met ? 'met' : 'NOT MET');
    if (r.filters)
      out.push(
        `(partial run: ${Object.entries(r.filters)
          .map(([k, v]) => `--${k}=${v}`)
          .join(' ')})`,
      );
    if (r.previous) {
      // The run of record before this one, judged by the same rules, beside each goal.
      const prev = r.previous;
      out.push(`Goals (previous = the run of record of ${prev.startedAt}, commit ${prev.commit}, judged by the same rules)`);
      out.push(
        table(
          ['goal', 'met', 'figure', 'previous', 'previous figure'],
          r.goals.map((g) => {
            const p = prev.goals.find((q) => q.goal === g.goal);
            return [g.goal, verdict(g), g.figure, verdict(p), p?.figure ?? ''];
          }),
          5,
        ),
      );
    } else {
      out.push('Goals');
      out.push(
        table(
          ['goal', 'met', 'figure'],
          r.goals.map((g) => [g.goal, verdict(g), g.figure]),
          3,
        ),
      );
    }
  }
  return `${out.join('\n')}\n`;
}
