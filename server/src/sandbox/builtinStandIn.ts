// Stand-ins for Node built-in modules imported by the user's own files: every export is there
// under its real name, but a function throws when called (and an object when read), naming the
// module and the member. Importing `node:path` for a logging helper that the check never calls
// costs nothing; calling it fails with a message instead of the whole file being uncheckable.
import { createRequire } from 'node:module';
import { join } from 'node:path';

/** esbuild namespace of the stand-ins; frames mapped into it are not the user's call site. */
export const UNAVAILABLE_BUILTIN_NAMESPACE = 'gradient-probe-unavailable-builtin';

const IDENTIFIER = /^[A-Za-z_$][A-Za-z0-9_$]*$/;
const RESERVED = new Set(['default', 'arguments', 'eval', 'await', 'yield', 'let', 'static', 'enum', 'implements', 'interface', 'package', 'private', 'protected', 'public']);

/** Names and kinds of a built-in's exports, read from the host's own copy of the module. */
function exportsOf(moduleName: string): Array<{ name: string; value: unknown }> {
  let mod: Record<string, unknown>;
  try {
    mod = createRequire(join(process.cwd(), 'gradient-probe.js'))(moduleName) as Record<string, unknown>;
  } catch {
    return [];
  }
  const out: Array<{ name: string; value: unknown }> = [];
  for (const name of Object.keys(mod)) {
    if (!IDENTIFIER.test(name) || RESERVED.has(name)) continue;
    let value: unknown;
    try {
      value = mod[name];
    } catch {
      value = undefined;
    }
    out.push({ name, value });
  }
  return out;
}

/** Exports passed through as their values: the path module's separators. */
const PLAIN_CONSTANTS = new Set(['path.sep', 'path.delimiter', 'path/posix.sep', 'path/posix.delimiter']);

function bareName(moduleName: string): string {
  return moduleName.startsWith('node:') ? moduleName.slice(5) : moduleName;
}

/** ES module source of the stand-in for `moduleName` as imported by `importer` (a path for the message). */
export function unavailableModuleCode(moduleName: string, importer: string): string {
  const why = `is not available to code checked in the sandbox: "${moduleName}" is a Node built-in module (imported in ${importer}); keep the op's code path free of it, or pass what it computes in as an input`;
  const lines = [
    `const why = ${JSON.stringify(why)};`,
    `const unavailable = (member) => function () { throw new Error(${JSON.stringify(moduleName)} + "'s " + member + "() " + why); };`,
    `const unavailableObject = (member) => new Proxy({}, { get(_t, key) { if (typeof key === 'symbol') return undefined; throw new Error(${JSON.stringify(moduleName)} + "'s " + member + "." + String(key) + " " + why); } });`,
  ];
  const names: string[] = [];
  for (const { name, value } of exportsOf(moduleName)) {
    // The path separators are harmless constants; every other value (even a primitive such as
    // process.pid, which would tell user code about the host) throws on use.
    const init =
      PLAIN_CONSTANTS.has(`${bareName(moduleName)}.${name}`) && typeof value === 'string'
        ? JSON.stringify(value)
        : typeof value === 'function'
          ? `unavailable(${JSON.stringify(name)})`
          : `unavailableObject(${JSON.stringify(name)})`;
    lines.push(`export const ${name} = ${init};`);
    names.push(name);
  }
  lines.push(`export default { ${names.join(', ')} };`);
  return lines.join('\n');
}
