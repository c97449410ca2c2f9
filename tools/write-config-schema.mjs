// Writes schemas/gradient-probe.schema.json (`npm run schema`) from projectConfigSchema() in
// server/src/project/configSchema.ts, the table the configuration reader validates with.
// test/project/configSchemaFile.test.ts fails when the shipped file differs from it.
import * as esbuild from 'esbuild';
import { writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const built = await esbuild.build({
  entryPoints: [join(root, 'server/src/project/configSchema.ts')],
  bundle: true,
  write: false,
  format: 'esm',
  platform: 'node',
  logLevel: 'warning',
  packages: 'external',
});
const { projectConfigSchema } = await import(`data:text/javascript;base64,${Buffer.from(built.outputFiles[0].text).toString('base64')}`);
const out = join(root, 'schemas', 'gradient-probe.schema.json');
writeFileSync(out, `${JSON.stringify(projectConfigSchema(), null, 2)}\n`);
console.log(`wrote ${out}`);
