// The JSON schema shipped for editors (schemas/gradient-probe.schema.json, contributed to VS Code
// through `contributes.jsonValidation`) must be exactly what projectConfigSchema() generates from
// the reader's own field table; `npm run schema` rewrites it.

import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { projectConfigSchema } from '../../server/src/project/configSchema';
import { ROOT } from '../helpers/cli';

describe('shipped configuration schema', () => {
  it('equals the schema generated from the configuration fields (else run npm run schema)', () => {
    const shipped = JSON.parse(readFileSync(join(ROOT, 'schemas', 'gradient-probe.schema.json'), 'utf8')) as unknown;
    assert.deepEqual(shipped, projectConfigSchema());
  });

  it('is contributed to VS Code for gradient-probe.json, which is read as JSON with comments', () => {
    const manifest = JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8')) as {
      contributes: { jsonValidation?: { fileMatch: string; url: string }[]; languages?: { id: string; filenames?: string[] }[] };
      files?: string[];
    };
    assert.deepEqual(manifest.contributes.jsonValidation, [{ fileMatch: 'gradient-probe.json', url: './schemas/gradient-probe.schema.json' }]);
    assert.ok(manifest.contributes.languages?.some((l) => l.id === 'jsonc' && l.filenames?.includes('gradient-probe.json')));
    assert.ok(manifest.files?.includes('schemas/'), 'the npm package carries the schema');
  });
});
