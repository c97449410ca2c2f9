// Tests of the command-line parser: every flag lands where it should, and every mistake is a
// usage error that names the flag (the CLI turns it into exit code 2).

import assert from 'node:assert/strict';
import { CHECK_FLAGS, parseArgs, UsageError, type CheckOptions } from '../../server/src/cli/args';
import { checkHelp } from '../../server/src/cli/help';

function check(...argv: string[]): CheckOptions {
  const command = parseArgs(['check', ...argv]);
  assert.equal(command.kind, 'check');
  return (command as { options: CheckOptions }).options;
}

function usageError(argv: string[]): UsageError {
  try {
    parseArgs(argv);
  } catch (err) {
    assert.ok(err instanceof UsageError, String(err));
    return err;
  }
  assert.fail(`no usage error for ${argv.join(' ')}`);
}

describe('command-line parsing', () => {
  it('reads paths and every check flag', () => {
    const o = check(
      'src',
      '--json',
      '--sarif',
      'out/r.sarif',
      '--junit=out/r.xml',
      '--filter',
      'Dense',
      '--seed',
      '42',
      '--tolerance',
      '1e-7',
      '--tolerance-f32=2e-3',
      '--time-limit',
      '1500',
      '--memory-limit',
      '256',
      '--workers',
      '3',
      '--config',
      'ci.json',
      '--fail-on-inconclusive',
      '--only-problems',
      '--color',
      'always',
      'lib/x.ts',
      '--shard',
      '2/5',
      '--changed-since=origin/main',
      '--allow-unfinished',
    );
    assert.deepEqual(o, {
      paths: ['src', 'lib/x.ts'],
      json: true,
      sarif: 'out/r.sarif',
      junit: 'out/r.xml',
      filter: 'Dense',
      config: 'ci.json',
      workers: 3,
      failOnInconclusive: true,
      onlyProblems: true,
      color: 'always',
      allowUnfinished: true,
      shard: { index: 2, count: 5 },
      changedSince: 'origin/main',
      overrides: { seed: 42, toleranceF64: 1e-7, toleranceF32: 2e-3, timeLimitMs: 1500, memoryLimitMb: 256 },
    });
  });

  it('has plain defaults', () => {
    assert.deepEqual(check(), { paths: [], json: false, overrides: {}, failOnInconclusive: false, onlyProblems: false, color: 'auto', allowUnfinished: false });
    assert.equal(check('--no-color').color, 'never');
  });

  it('takes everything after -- as a path, even when it looks like a flag', () => {
    assert.deepEqual(check('--json', '--', '--odd-name.ts', '-x').paths, ['--odd-name.ts', '-x']);
  });

  it('knows the other commands', () => {
    assert.deepEqual(parseArgs(['--version']), { kind: 'version' });
    assert.deepEqual(parseArgs(['--help']), { kind: 'help' });
    assert.deepEqual(parseArgs(['help', 'check']), { kind: 'help', command: 'check' });
    assert.deepEqual(parseArgs(['check', 'src', '--help']), { kind: 'help', command: 'check' });
    assert.deepEqual(parseArgs(['lsp', '--stdio']), { kind: 'lsp', transportArgs: ['--stdio'] });
    assert.deepEqual(parseArgs(['lsp', '--socket=7001']), { kind: 'lsp', transportArgs: ['--socket=7001'] });
    assert.deepEqual(parseArgs(['help', 'merge']), { kind: 'help', command: 'merge' });
  });

  it('reads merge: report files and only the output flags', () => {
    const command = parseArgs(['merge', 'a.json', 'b.json', '--junit', 'all.xml', '--allow-unfinished']);
    assert.equal(command.kind, 'merge');
    const o = (command as { options: CheckOptions }).options;
    assert.deepEqual([o.paths, o.junit, o.allowUnfinished], [['a.json', 'b.json'], 'all.xml', true]);
    assert.match(usageError(['merge']).message, /merge needs the report files/);
    assert.match(usageError(['merge', 'a.json', '--seed', '3']).message, /unknown flag --seed \(it belongs to check; merge only joins reports\)/);
  });

  const mistakes: { argv: string[]; flag: string | undefined; message: RegExp }[] = [
    { argv: [], flag: undefined, message: /no command given/ },
    { argv: ['chek'], flag: 'chek', message: /unknown command "chek" \(did you mean "check"\?\)/ },
    { argv: ['check', '--tolerence', '1e-6'], flag: '--tolerence', message: /unknown flag --tolerence \(did you mean --tolerance\?\)/ },
    { argv: ['check', '--verbose'], flag: '--verbose', message: /^unknown flag --verbose$/ },
    { argv: ['check', '--shard', '5/4'], flag: '--shard', message: /--shard must be K\/N with 1 ≤ K ≤ N .*got "5\/4"/ },
    { argv: ['check', '--shard', '0/2'], flag: '--shard', message: /--shard must be K\/N/ },
    { argv: ['check', '--shard', 'two'], flag: '--shard', message: /--shard must be K\/N/ },
    { argv: ['check', '--seed'], flag: '--seed', message: /--seed needs a value \(N\)/ },
    { argv: ['check', '--sarif', '--json'], flag: '--sarif', message: /--sarif needs a value \(FILE\)/ },
    { argv: ['check', '--filter='], flag: '--filter', message: /--filter needs a value/ },
    { argv: ['check', '--json=yes'], flag: '--json', message: /--json takes no value/ },
    { argv: ['check', '--seed', '1', '--seed', '2'], flag: '--seed', message: /--seed is given more than once/ },
    { argv: ['check', '--seed', 'abc'], flag: '--seed', message: /--seed must be an integer of at least 0, got "abc"/ },
    { argv: ['check', '--seed', '-3'], flag: '--seed', message: /got "-3"/ },
    { argv: ['check', '--tolerance', '0'], flag: '--tolerance', message: /--tolerance must be a positive number below 1, got "0"/ },
    { argv: ['check', '--tolerance-f32', '1.5'], flag: '--tolerance-f32', message: /--tolerance-f32 must be a positive number below 1/ },
    { argv: ['check', '--time-limit', '2.5'], flag: '--time-limit', message: /--time-limit must be an integer from 1 to 2147483647, got "2.5"/ },
    { argv: ['check', '--memory-limit', '8'], flag: '--memory-limit', message: /--memory-limit must be an integer of at least 16, got "8"/ },
    { argv: ['check', '--workers', '0'], flag: '--workers', message: /--workers must be an integer from 1 to 256, got "0"/ },
    { argv: ['check', '--color', 'sometimes'], flag: '--color', message: /--color must be auto, always or never/ },
    { argv: ['lsp'], flag: 'lsp', message: /lsp needs a transport: --stdio/ },
  ];
  for (const m of mistakes) {
    it(`refuses "${m.argv.join(' ')}" naming ${m.flag ?? 'the problem'}`, () => {
      const err = usageError(m.argv);
      assert.match(err.message, m.message);
      assert.equal(err.flag, m.flag);
    });
  }

  it('documents every flag in the help text', () => {
    const help = checkHelp();
    for (const flag of CHECK_FLAGS) {
      assert.match(help, new RegExp(`^  ${flag.name}${flag.value ? ` ${flag.value}` : ''} +\\S`, 'm'), flag.name);
    }
  });
});
