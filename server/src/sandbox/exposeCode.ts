// The code appended to a bundle's entry that makes the ops' bindings (exported or not)
// reachable from the sandbox as globalThis.__gradientProbeExposed.
import { DEFAULT_EXPORT_BINDING, TENSOR_LIBRARY_BINDING } from '../model/types';

export /** A binding name we may splice into code: a plain identifier, nothing else. */
const IDENTIFIER = /^[A-Za-z_$][A-Za-z0-9_$]*$/;

/** Package names a tensor-library import may name (checked again here: it is spliced into code). */
const TENSOR_LIBRARY_PACKAGE = /^@tensorflow\/tfjs(?:-core|-node|-node-gpu)?$/;

/**
 * The code appended to the entry: `globalThis.__gradientProbeExposed = { name: …, … }`, with
 * the tensor library's namespace (an import, hoisted like every import) when asked for.
 */
export function exposeCode(bindings: string[], tensorLibrary?: string, file?: string): string {
  const names = [...new Set(bindings)].filter((n) => IDENTIFIER.test(n)).sort();
  const fields = names.map((n) => `  ${JSON.stringify(n)}: typeof ${n} !== 'undefined' ? ${n} : undefined`);
  let head = '';
  if (tensorLibrary !== undefined && TENSOR_LIBRARY_PACKAGE.test(tensorLibrary)) {
    head = `\n;import * as ${TENSOR_LIBRARY_BINDING} from ${JSON.stringify(tensorLibrary)};`;
    fields.push(`  ${JSON.stringify(TENSOR_LIBRARY_BINDING)}: ${TENSOR_LIBRARY_BINDING}`);
  }
  // An anonymous default export has no name in its module: a self-import gives it one (the
  // bundler resolves it to the same module, so nothing runs twice).
  if (file !== undefined && names.includes(DEFAULT_EXPORT_BINDING)) head += `\nimport ${DEFAULT_EXPORT_BINDING} from ${JSON.stringify(file)};`;
  return `${head}\n;globalThis.__gradientProbeExposed = {\n${fields.join(',\n')}\n};\n`;
}
