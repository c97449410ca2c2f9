// A structural check of a SARIF log against the required properties and value rules of the
// OASIS SARIF 2.1.0 standard (sarifLog, run, toolComponent, reportingDescriptor, result,
// location, physicalLocation, artifactLocation, region). Section numbers are left out: the rules
// below are written from the standard's text as remembered, not copied from its schema file.

type Obj = Record<string, unknown>;

function isObj(v: unknown): v is Obj {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}
function isInt(v: unknown, min: number): boolean {
  return typeof v === 'number' && Number.isInteger(v) && v >= min;
}

/** A URI reference as RFC 3986 allows it: no spaces, backslashes or other raw delimiters. */
function isUriReference(s: string): boolean {
  return s.length > 0 && !/[\s\\"<>^`{|}]/.test(s) && !/%(?![0-9A-Fa-f]{2})/.test(s);
}

const LEVELS = ['none', 'note', 'warning', 'error'];

/** Every violation found; [] when the log conforms to what is checked here. */
export function sarifViolations(log: unknown): string[] {
  const out: string[] = [];
  if (!isObj(log)) return ['log is not an object'];
  if (log['version'] !== '2.1.0') out.push(`version must be "2.1.0", got ${JSON.stringify(log['version'])}`);
  if (log['$schema'] !== undefined && (typeof log['$schema'] !== 'string' || !isUriReference(log['$schema']))) out.push('$schema must be a URI');
  const runs = log['runs'];
  if (!Array.isArray(runs)) return [...out, 'runs must be an array (null is allowed only when no run was made)'];
  runs.forEach((run, r) => {
    const at = `runs[${r}]`;
    if (!isObj(run)) {
      out.push(`${at} is not an object`);
      return;
    }
    const driver = isObj(run['tool']) ? (run['tool'] as Obj)['driver'] : undefined;
    if (!isObj(driver)) {
      out.push(`${at}.tool.driver is required`);
      return;
    }
    if (typeof driver['name'] !== 'string' || driver['name'] === '') out.push(`${at}.tool.driver.name is required`);
    const rules = driver['rules'] ?? [];
    const ruleIds: string[] = [];
    if (!Array.isArray(rules)) out.push(`${at}.tool.driver.rules must be an array`);
    else
      rules.forEach((rule, k) => {
        if (!isObj(rule) || typeof rule['id'] !== 'string') out.push(`${at}.tool.driver.rules[${k}].id is required`);
        else {
          if (ruleIds.includes(rule['id'])) out.push(`rule id ${rule['id']} is not unique`);
          ruleIds.push(rule['id']);
          const level = isObj(rule['defaultConfiguration']) ? (rule['defaultConfiguration'] as Obj)['level'] : undefined;
          if (level !== undefined && !LEVELS.includes(level as string)) out.push(`rule ${rule['id']} has a bad default level`);
        }
      });
    const bases = isObj(run['originalUriBaseIds']) ? (run['originalUriBaseIds'] as Obj) : {};
    for (const [id, base] of Object.entries(bases)) {
      const uri = isObj(base) ? base['uri'] : undefined;
      if (typeof uri !== 'string' || !uri.endsWith('/') || !/^[a-z][a-z0-9+.-]*:/i.test(uri)) {
        out.push(`originalUriBaseIds.${id}.uri must be an absolute URI ending with "/"`);
      }
    }
    const results = run['results'];
    if (results === undefined || results === null) return;
    if (!Array.isArray(results)) {
      out.push(`${at}.results must be an array`);
      return;
    }
    results.forEach((result, i) => out.push(...resultViolations(result, `${at}.results[${i}]`, ruleIds, bases)));
  });
  return out;
}

function resultViolations(result: unknown, at: string, ruleIds: string[], bases: Obj): string[] {
  if (!isObj(result)) return [`${at} is not an object`];
  const out: string[] = [];
  const message = result['message'];
  if (!isObj(message) || (typeof message['text'] !== 'string' && typeof message['id'] !== 'string')) {
    out.push(`${at}.message needs text or id`);
  } else if (typeof message['text'] === 'string' && message['text'] === '') out.push(`${at}.message.text is empty`);
  const ruleId = result['ruleId'];
  if (ruleId !== undefined && typeof ruleId !== 'string') out.push(`${at}.ruleId must be a string`);
  const ruleIndex = result['ruleIndex'];
  if (ruleIndex !== undefined) {
    if (!isInt(ruleIndex, 0) || (ruleIndex as number) >= ruleIds.length) out.push(`${at}.ruleIndex points at no rule`);
    else if (ruleId !== undefined && ruleIds[ruleIndex as number] !== ruleId) out.push(`${at}.ruleIndex and ruleId disagree`);
  }
  if (typeof ruleId === 'string' && ruleIds.length > 0 && !ruleIds.includes(ruleId)) out.push(`${at}.ruleId ${ruleId} is not among the driver's rules`);
  if (result['level'] !== undefined && !LEVELS.includes(result['level'] as string)) out.push(`${at}.level must be one of ${LEVELS.join(', ')}`);
  const locations = result['locations'];
  if (locations !== undefined) {
    if (!Array.isArray(locations)) out.push(`${at}.locations must be an array`);
    else
      locations.forEach((loc, j) => {
        const where = `${at}.locations[${j}]`;
        const physical = isObj(loc) ? loc['physicalLocation'] : undefined;
        if (!isObj(physical)) {
          out.push(`${where}.physicalLocation expected`);
          return;
        }
        const artifact = physical['artifactLocation'];
        if (!isObj(artifact) || typeof artifact['uri'] !== 'string' || !isUriReference(artifact['uri'])) {
          out.push(`${where}.physicalLocation.artifactLocation.uri must be a URI reference`);
        } else if (artifact['uriBaseId'] !== undefined && !(String(artifact['uriBaseId']) in bases)) {
          out.push(`${where} uses uriBaseId ${String(artifact['uriBaseId'])}, which originalUriBaseIds does not define`);
        }
        const region = physical['region'];
        if (region !== undefined) {
          if (!isObj(region)) out.push(`${where}.region must be an object`);
          else {
            if (!isInt(region['startLine'], 1)) out.push(`${where}.region.startLine must be an integer ≥ 1 (1-based)`);
            if (region['startColumn'] !== undefined && !isInt(region['startColumn'], 1)) out.push(`${where}.region.startColumn must be ≥ 1 (1-based)`);
            if (region['endLine'] !== undefined && !(isInt(region['endLine'], 1) && (region['endLine'] as number) >= (region['startLine'] as number))) {
              out.push(`${where}.region.endLine must not come before startLine`);
            }
            if (region['endColumn'] !== undefined && !isInt(region['endColumn'], 1)) out.push(`${where}.region.endColumn must be ≥ 1`);
          }
        }
      });
  }
  return out;
}
