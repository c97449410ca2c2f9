// End-to-end tests of the `gradient-probe` command: they spawn the real binary
// (`node bin/gradient-probe.js`, built by `npm run build`) on the workspaces in
// test/fixtures/cli/ and check stdout, stderr, exit codes and the files it writes.

import assert from 'node:assert/strict';
import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { OpResult, Report } from '../../server/src/model/types';
import { reportViolations } from './helpers/reportShape';
import { sarifViolations } from './helpers/sarifShape';
import { findAll, parseXml } from './helpers/xml';
import { BIN, ROOT, runCli, SPAWN_LIMIT_MS, type CliRun } from '../helpers/cli';

const FIXTURES = 'test/fixtures/cli';

function fixtureText(rel: string): string {
  return readFileSync(join(ROOT, FIXTURES, rel), 'utf8');
}

/** 1-based line of the first line containing `needle`. */
function lineOf(text: string, needle: string): number {
  const i = text.split('\n').findIndex((l) => l.includes(needle));
  assert.ok(i >= 0, `${needle} not in fixture`);
  return i + 1;
}

function pairNamed(report: Report, forward: string): OpResult {
  const pair = report.pairs.find((p) => p.forward === forward);
  assert.ok(pair, `no pair for ${forward} in ${report.pairs.map((p) => p.forward).join(', ')}`);
  return pair;
}

describe('gradient-probe command (spawned)', function () {
  this.timeout(2 * SPAWN_LIMIT_MS);
  const temps: string[] = [];
  const tempDir = (): string => {
    const d = mkdtempSync(join(tmpdir(), 'gp-cli-'));
    temps.push(d);
    return d;
  };

  before(() => {
    assert.ok(existsSync(join(ROOT, 'dist', 'cli.js')), 'dist/cli.js is missing: run npm run build first');
  });
  after(() => {
    for (const d of temps) rmSync(d, { recursive: true, force: true });
  });

  describe('check --json on a workspace with every kind of op', () => {
    let run: CliRun;
    let report: Report;
    before(async () => {
      run = await runCli(['check', `${FIXTURES}/basic`, '--json']);
      report = JSON.parse(run.stdout) as Report; // stdout is the report and nothing else
    });

    it('exits 1 because an op is mismatch or error', () => {
      assert.equal(run.code, 1, run.stderr);
    });

    it('writes a report that matches the version-1 schema', () => {
      assert.deepEqual(reportViolations(report), []);
      assert.deepEqual(report.summary, { pass: 3, mismatch: 1, inconclusive: 0, error: 2 });
    });

    it("gives paths relative to the current folder and the line of the forward's name", () => {
      const glaze = pairNamed(report, 'glazeResponse');
      assert.equal(glaze.file, `${FIXTURES}/basic/passing.ts`);
      assert.equal(glaze.line, lineOf(fixtureText('basic/passing.ts'), 'export function glazeResponse'));
      assert.equal(glaze.backward, 'glazeResponseBackward');
      assert.equal(glaze.seed, 1234, 'the default seed of engine/settings.ts');
    });

    it('passes the correct ops (derivatives from Abramowitz & Stegun ch. 4)', () => {
      for (const name of ['glazeResponse', 'coolingCurve', 'thermocouple']) assert.equal(pairNamed(report, name).verdict, 'pass', name);
    });

    it('states a detection floor on every checked parameter: the tolerance itself when every element was compared (docs/report-format.md, detectionFloor)', () => {
      for (const name of ['glazeResponse', 'coolingCurve', 'thermocouple', 'fuelLog']) {
        for (const p of pairNamed(report, name).params) {
          // Small ops compare every element, so the floor is the float64 tolerance (engine/settings.ts).
          if (p.checkedElements === p.elements) assert.equal(p.detectionFloor, 1e-6, `${name} ${p.name}`);
          else assert.ok(typeof p.detectionFloor === 'number' && p.detectionFloor >= 1e-6, `${name} ${p.name}`);
        }
      }
    });

    it('reports the halved derivative of ln x as a mismatch with the evidence', () => {
      const fuel = pairNamed(report, 'fuelLog');
      assert.equal(fuel.verdict, 'mismatch');
      const x = fuel.params.find((p) => p.name === 'x');
      assert.ok(x?.worst, 'the mismatching parameter names its worst element');
      // d/dx ln x = 1/x (A&S ch. 4); the fixture's backward returns 1/(2x): analytic/numeric = 1/2
      // at every element, so the relative error |a − n| / max(|a|, |n|) is 1/2.
      assert.ok(Math.abs(x.worst.analytic / x.worst.numeric - 0.5) < 1e-6, `${x.worst.analytic} vs ${x.worst.numeric}`);
      assert.ok(Math.abs(x.maxRelError - 0.5) < 1e-6, String(x.maxRelError));
    });

    it('reports an annotation mistake as an error at the tag', () => {
      const shelf = pairNamed(report, 'shelfSpacing');
      assert.equal(shelf.verdict, 'error');
      const text = fixtureText('basic/annotation.ts');
      const line = lineOf(text, '@sample x f63');
      const lineText = text.split('\n')[line - 1]!;
      const problem = shelf.problems?.[0];
      assert.ok(problem, 'problems list');
      assert.equal(problem.line, line);
      assert.ok(problem.column >= lineText.indexOf('@sample') + 1 && problem.column <= lineText.indexOf('f63') + 1, `column ${problem.column}`);
    });

    it('reports a file with a syntax error as an error on its op, at the broken line', () => {
      const vent = pairNamed(report, 'ventOpening');
      assert.equal(vent.verdict, 'error');
      assert.ok(
        vent.problems?.some((p) => p.line === lineOf(fixtureText('basic/syntax.ts'), 'x * (x + ;')),
        JSON.stringify(vent.problems),
      );
    });

    it('keeps what ops print in their output field, off stdout', () => {
      const noisy = pairNamed(report, 'thermocouple');
      assert.match(noisy.output ?? '', /thermocouple read 3 channels/);
      assert.match(noisy.output ?? '', /"version": 99/);
      // Nothing but the report on stdout: it is exactly the report's own serialisation.
      assert.equal(run.stdout, `${JSON.stringify(report, null, 2)}\n`);
      assert.doesNotMatch(run.stderr, /thermocouple read/);
    });
  });

  describe('human output', () => {
    let run: CliRun;
    let json: Report;
    before(async () => {
      run = await runCli(['check', `${FIXTURES}/basic`]);
      json = JSON.parse((await runCli(['check', `${FIXTURES}/basic`, '--json'])).stdout) as Report;
    });

    it('ends with the summary line and exits 1', () => {
      assert.equal(run.code, 1, run.stderr);
      const last = run.stdout.trimEnd().split('\n').at(-1)!;
      assert.match(last, /^6 ops in 5 files: 3 pass, 1 mismatch, 0 inconclusive, 2 error \((<1 ms|\d+ ms|\d+\.\d s)\)$/);
    });

    it('has a row per op and no colour when stdout is not a terminal', () => {
      assert.doesNotMatch(run.stdout, /\x1b\[/);
      for (const pair of json.pairs) {
        assert.match(run.stdout, new RegExp(`^\\s+${pair.line}\\s+${pair.forward!.replace('.', '\\.')}\\s+(pass|MISMATCH|ERROR|inconclusive)\\s`, 'm'));
      }
    });

    it('explains the mismatch with every hint of the JSON report, and errors at file:line:column', () => {
      const fuel = pairNamed(json, 'fuelLog');
      for (const hint of [...fuel.hints, ...fuel.params.flatMap((p) => p.hints)]) assert.ok(run.stdout.includes(hint), hint);
      const problem = pairNamed(json, 'shelfSpacing').problems![0]!;
      assert.ok(run.stdout.includes(`${FIXTURES}/basic/annotation.ts:${problem.line}:${problem.column}: ${problem.message}`));
    });

    it('colours only when asked', async () => {
      const coloured = await runCli(['check', `${FIXTURES}/basic/passing.ts`, '--color', 'always']);
      assert.match(coloured.stdout, /\x1b\[32mpass\x1b\[0m/);
    });
  });

  it('exits 0 when every op passes', async () => {
    const run = await runCli(['check', `${FIXTURES}/basic/passing.ts`]);
    assert.equal(run.code, 0, run.stdout + run.stderr);
    assert.match(run.stdout, /2 ops in 1 file: 2 pass, 0 mismatch, 0 inconclusive, 0 error/);
  });

  it('--isolated runs the ops in the interpreter, labels them, and reaches the same verdicts', async () => {
    const inRunner = await runCli(['check', `${FIXTURES}/basic/passing.ts`, `${FIXTURES}/basic/mismatch.ts`, '--json']);
    const isolated = await runCli(['check', `${FIXTURES}/basic/passing.ts`, `${FIXTURES}/basic/mismatch.ts`, '--json', '--isolated']);
    const a = JSON.parse(inRunner.stdout) as Report;
    const b = JSON.parse(isolated.stdout) as Report;
    assert.equal(isolated.code, inRunner.code);
    assert.deepEqual(
      b.pairs.map((p) => [p.forward, p.verdict]),
      a.pairs.map((p) => [p.forward, p.verdict]),
    );
    assert.ok(b.pairs.length > 0 && b.pairs.every((p) => p.isolation === 'interpreter'), isolated.stdout);
    assert.ok(a.pairs.every((p) => p.isolation === undefined));
  });

  it('checks only the ops the filter names', async () => {
    const fuel = await runCli(['check', `${FIXTURES}/basic`, '--json', '--filter', 'fuel']);
    assert.equal(fuel.code, 1);
    assert.deepEqual(
      (JSON.parse(fuel.stdout) as Report).pairs.map((p) => p.forward),
      ['fuelLog'],
    );
    const none = await runCli(['check', `${FIXTURES}/basic/passing.ts`, '--json', '--filter', 'glazr']);
    assert.equal(none.code, 2, 'a filter that matches nothing checked nothing: the run fails');
    assert.match(none.stderr, /--filter "glazr" matches no op's forward name/);
    const glaze = await runCli(['check', `${FIXTURES}/basic`, '--json', '--filter', 'glaze']);
    assert.equal(glaze.code, 0, glaze.stdout);
    assert.deepEqual(
      (JSON.parse(glaze.stdout) as Report).pairs.map((p) => p.forward),
      ['glazeResponse'],
    );
  });

  it('checks the current folder by default, with paths relative to it', async () => {
    const run = await runCli(['check', '--json', '--filter', 'cooling'], { cwd: join(ROOT, FIXTURES, 'basic') });
    const report = JSON.parse(run.stdout) as Report;
    assert.deepEqual(
      report.pairs.map((p) => [p.file, p.forward, p.verdict]),
      [['passing.ts', 'coolingCurve', 'pass']],
    );
    assert.equal(run.code, 0);
  });

  it('writes SARIF 2.1.0 and JUnit XML files, creating their folders', async () => {
    const out = tempDir();
    const sarifPath = join(out, 'reports', 'probe.sarif');
    const junitPath = join(out, 'reports', 'deeper', 'probe.xml');
    const run = await runCli(['check', `${FIXTURES}/basic`, '--sarif', sarifPath, '--junit', junitPath]);
    assert.equal(run.code, 1, run.stderr);

    const log = JSON.parse(readFileSync(sarifPath, 'utf8'));
    assert.deepEqual(sarifViolations(log), []);
    const results = log.runs[0].results as { ruleId: string; locations: { physicalLocation: { artifactLocation: { uri: string }; region: { startLine: number } } }[] }[];
    const mismatch = results.find((r) => r.ruleId === 'gradient-mismatch')!;
    assert.equal(mismatch.locations[0]!.physicalLocation.artifactLocation.uri, `${FIXTURES}/basic/mismatch.ts`);
    assert.equal(mismatch.locations[0]!.physicalLocation.region.startLine, lineOf(fixtureText('basic/mismatch.ts'), 'export function fuelLog'));
    assert.equal(results.filter((r) => r.ruleId === 'gradient-mismatch').length, 1);
    assert.equal(results.length, 3, 'one mismatch, one annotation problem, one syntax problem; passes are no findings');

    const junit = parseXml(readFileSync(junitPath, 'utf8'));
    assert.deepEqual([junit.attributes['tests'], junit.attributes['failures'], junit.attributes['errors']], ['6', '1', '2']);
    const fuelCase = findAll(junit, 'testcase').find((c) => c.attributes['name'] === 'fuelLog')!;
    assert.equal(findAll(fuelCase, 'failure').length, 1);
    const noisyCase = findAll(junit, 'testcase').find((c) => c.attributes['name'] === 'thermocouple')!;
    assert.match(findAll(noisyCase, 'system-out')[0]?.text ?? '', /thermocouple read/);
  });

  it('exits 2 and names the key when the configuration file is wrong', async () => {
    const run = await runCli(['check', `${FIXTURES}/config-error`, '--json']);
    assert.equal(run.code, 2);
    assert.equal(run.stdout, '');
    assert.match(run.stderr, /test\/fixtures\/cli\/config-error\/gradient-probe\.json: "tolerance\.f64" must be a positive number below 1, got "abc"/);
  });

  it("uses the project file's seed and excludes, and a flag wins over the file", async () => {
    const run = await runCli(['check', `${FIXTURES}/configured`, '--json']);
    assert.equal(run.code, 0, run.stdout + run.stderr);
    const report = JSON.parse(run.stdout) as Report;
    assert.deepEqual(
      report.pairs.map((p) => p.file),
      [`${FIXTURES}/configured/passing.ts`, `${FIXTURES}/configured/passing.ts`],
    );
    assert.ok(report.pairs.every((p) => p.seed === 4242));
    const flagged = JSON.parse((await runCli(['check', `${FIXTURES}/configured`, '--json', '--seed', '7'])).stdout) as Report;
    assert.ok(flagged.pairs.every((p) => p.seed === 7));
  });

  it('reads the file named by --config instead of searching', async () => {
    const run = await runCli(['check', `${FIXTURES}/basic/passing.ts`, '--config', `${FIXTURES}/config-error/gradient-probe.json`]);
    assert.equal(run.code, 2);
    assert.match(run.stderr, /"tolerance\.f64"/);
    const missing = await runCli(['check', `${FIXTURES}/basic/passing.ts`, '--config', 'nowhere.json']);
    assert.equal(missing.code, 2);
    assert.match(missing.stderr, /nowhere\.json: configuration file not found/);
  });

  it('exits 2 on usage mistakes, naming the flag or path, with nothing on stdout', async () => {
    for (const [args, message] of [
      [['check', '--tolerence', '1e-6'], /unknown flag --tolerence \(did you mean --tolerance\?\)/],
      [['check', '--time-limit', 'soon'], /--time-limit must be an integer from 1 to 2147483647, got "soon"/],
      [['check', 'no/such/dir', '--json'], /no\/such\/dir: no such file or folder/],
      [['check', 'package.json'], /package\.json: not a TypeScript source/],
      [['frobnicate'], /unknown command "frobnicate"/],
      [[], /no command given/],
    ] as const) {
      const run = await runCli([...args]);
      assert.equal(run.code, 2, args.join(' '));
      assert.equal(run.stdout, '', args.join(' '));
      assert.match(run.stderr, message);
    }
  });

  it('exits 2 when a report file cannot be written, naming the flag', async () => {
    const run = await runCli(['check', `${FIXTURES}/basic/passing.ts`, '--junit', 'package.json/inside/report.xml']);
    assert.equal(run.code, 2);
    assert.match(run.stderr, /--junit package\.json\/inside\/report\.xml: cannot write the file/);
  });

  it('ends a forward that never returns at the time limit, reports it, and exits', async () => {
    const run = await runCli(['check', `${FIXTURES}/hang`, '--json', '--time-limit', '800']);
    assert.equal(run.code, 1, run.stderr);
    const latch = pairNamed(JSON.parse(run.stdout) as Report, 'latch');
    assert.equal(latch.verdict, 'error');
    assert.match(latch.message, /time|limit/i);
  });

  it('reports an empty folder as no ops, and fails the run with the reason', async () => {
    const empty = tempDir();
    const run = await runCli(['check', '--json'], { cwd: empty });
    assert.equal(run.code, 2, run.stderr);
    const report = JSON.parse(run.stdout) as Report;
    assert.deepEqual({ ...report, run: undefined }, { version: 1, pairs: [], summary: { pass: 0, mismatch: 0, inconclusive: 0, error: 0 }, run: undefined });
    assert.match(run.stderr, /nothing was checked: no TypeScript sources .* under the current folder/);
  });

  it('prints help and the package version', async () => {
    const help = await runCli(['check', '--help']);
    assert.equal(help.code, 0);
    assert.match(help.stdout, /^gradient-probe check \[PATH \.\.\.\]/);
    assert.match(help.stdout, /--time-limit MS/);
    const version = await runCli(['--version']);
    const pkg = JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8')) as { version: string };
    assert.equal(version.stdout, `${pkg.version}\n`);
  });

  it('starts the language server with lsp --stdio', async () => {
    const child = spawn(process.execPath, [BIN, 'lsp', '--stdio'], { cwd: ROOT, stdio: ['pipe', 'pipe', 'pipe'] });
    const exited = new Promise<number | null>((resolve) => child.on('close', resolve));
    let buffer = '';
    let stderr = '';
    child.stderr.setEncoding('utf8').on('data', (d: string) => (stderr += d));
    const waiters = new Map<number, (body: { result?: unknown }) => void>();
    child.stdout.setEncoding('utf8').on('data', (d: string) => {
      buffer += d;
      // Base protocol framing: "Content-Length: N\r\n\r\n" then N bytes of JSON (all ASCII here).
      for (let m = /^Content-Length: (\d+)\r\n\r\n/.exec(buffer); m && buffer.length >= m[0].length + Number(m[1]); m = /^Content-Length: (\d+)\r\n\r\n/.exec(buffer)) {
        const body = JSON.parse(buffer.slice(m[0].length, m[0].length + Number(m[1]))) as { id?: number; result?: unknown };
        buffer = buffer.slice(m[0].length + Number(m[1]));
        if (typeof body.id === 'number') waiters.get(body.id)?.(body);
      }
    });
    const send = (msg: object): void => {
      const text = JSON.stringify({ jsonrpc: '2.0', ...msg });
      child.stdin.write(`Content-Length: ${Buffer.byteLength(text)}\r\n\r\n${text}`);
    };
    const request = (id: number, method: string, params: unknown): Promise<{ result?: unknown }> =>
      new Promise((resolve) => {
        waiters.set(id, resolve);
        send({ id, method, params });
      });
    const timer = setTimeout(() => child.kill('SIGKILL'), SPAWN_LIMIT_MS);
    try {
      const init = await request(1, 'initialize', {
        processId: null,
        rootUri: null,
        capabilities: {},
        initializationOptions: { workspaceTrusted: false },
      });
      assert.ok((init.result as { capabilities?: object }).capabilities, `initialize answered without capabilities; stderr: ${stderr}`);
      send({ method: 'initialized', params: {} });
      await request(2, 'shutdown', null);
      send({ method: 'exit', params: null });
      assert.equal(await exited, 0, `the server ends with 0 after shutdown and exit; stderr: ${stderr}`);
    } finally {
      clearTimeout(timer);
    }
  });
});
