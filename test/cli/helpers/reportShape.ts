// A schema check of the version-1 JSON report as the interface (§3, "--json report") defines
// it: required fields, their types, and the summary agreeing with the pairs. Returns violations.

const VERDICTS = ['pass', 'mismatch', 'inconclusive', 'error'];

type Obj = Record<string, unknown>;

function isObj(v: unknown): v is Obj {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}
function isInt(v: unknown, min: number): boolean {
  return typeof v === 'number' && Number.isInteger(v) && v >= min;
}
function isNum(v: unknown): boolean {
  return typeof v === 'number' && Number.isFinite(v);
}

/** Every way `report` departs from the v1 report; [] when it conforms. */
export function reportViolations(report: unknown): string[] {
  const out: string[] = [];
  if (!isObj(report)) return ['report is not an object'];
  if (report['version'] !== 1) out.push(`version must be 1, got ${JSON.stringify(report['version'])}`);
  const pairs = report['pairs'];
  if (!Array.isArray(pairs)) return [...out, 'pairs must be an array'];
  const counted: Record<string, number> = { pass: 0, mismatch: 0, inconclusive: 0, error: 0 };
  pairs.forEach((pair, i) => {
    const at = `pairs[${i}]`;
    if (!isObj(pair)) {
      out.push(`${at} is not an object`);
      return;
    }
    const file = pair['file'];
    if (typeof file !== 'string' || file === '') out.push(`${at}.file must be a non-empty string`);
    else {
      if (file.includes('\\')) out.push(`${at}.file must use "/" separators: ${file}`);
      if (file.startsWith('/') || /^[A-Za-z]:/.test(file)) out.push(`${at}.file must be relative: ${file}`);
    }
    if (!isInt(pair['line'], 1)) out.push(`${at}.line must be an integer ≥ 1`);
    for (const key of ['forward', 'backward']) {
      if (!(typeof pair[key] === 'string' || pair[key] === null)) out.push(`${at}.${key} must be a string or null`);
    }
    const verdict = pair['verdict'];
    if (typeof verdict !== 'string' || !VERDICTS.includes(verdict)) out.push(`${at}.verdict is not a verdict: ${JSON.stringify(verdict)}`);
    else counted[verdict]! += 1;
    if (!isInt(pair['seed'], 0)) out.push(`${at}.seed must be a non-negative integer`);
    if (!isNum(pair['elapsedMs']) || (pair['elapsedMs'] as number) < 0) out.push(`${at}.elapsedMs must be a finite number ≥ 0`);
    if (typeof pair['message'] !== 'string') out.push(`${at}.message must be a string`);
    if (!Array.isArray(pair['hints']) || !pair['hints'].every((h) => typeof h === 'string')) out.push(`${at}.hints must be strings`);
    if (pair['output'] !== undefined && typeof pair['output'] !== 'string') out.push(`${at}.output must be a string when present`);
    if (pair['kind'] !== undefined && !['backward', 'jacobian', 'tangent', 'hessian'].includes(pair['kind'] as string)) out.push(`${at}.kind must be backward, jacobian, tangent or hessian when present`);
    const problems = pair['problems'];
    if (problems !== undefined) {
      if (!Array.isArray(problems)) out.push(`${at}.problems must be an array when present`);
      else problems.forEach((p, j) => {
        if (!isObj(p) || !isInt(p['line'], 1) || !isInt(p['column'], 1) || typeof p['message'] !== 'string') {
          out.push(`${at}.problems[${j}] must be { line ≥ 1, column ≥ 1, message }`);
        }
      });
    }
    const params = pair['params'];
    if (!Array.isArray(params)) out.push(`${at}.params must be an array`);
    else params.forEach((p, j) => out.push(...paramViolations(p, `${at}.params[${j}]`)));
  });
  const summary = report['summary'];
  if (!isObj(summary)) out.push('summary must be an object');
  else for (const v of VERDICTS) {
    if (!isInt(summary[v], 0)) out.push(`summary.${v} must be a non-negative integer`);
    else if (summary[v] !== counted[v]) out.push(`summary.${v} is ${String(summary[v])} but ${counted[v]} pairs have that verdict`);
  }
  return out;
}

function paramViolations(p: unknown, at: string): string[] {
  if (!isObj(p)) return [`${at} is not an object`];
  const out: string[] = [];
  if (typeof p['name'] !== 'string' || p['name'] === '') out.push(`${at}.name must be a non-empty string`);
  if (typeof p['verdict'] !== 'string' || !VERDICTS.includes(p['verdict'])) out.push(`${at}.verdict is not a verdict`);
  for (const key of ['maxAbsError', 'maxRelError']) {
    if (!isNum(p[key]) || (p[key] as number) < 0) out.push(`${at}.${key} must be a finite number ≥ 0`);
  }
  const worst = p['worst'];
  if (worst !== null) {
    if (!isObj(worst)) out.push(`${at}.worst must be an object or null`);
    else {
      if (!Array.isArray(worst['index']) || !worst['index'].every((k) => isInt(k, 0))) out.push(`${at}.worst.index must be non-negative integers`);
      if (!isNum(worst['analytic']) || !isNum(worst['numeric'])) out.push(`${at}.worst.analytic/numeric must be finite numbers`);
    }
  }
  return out;
}
