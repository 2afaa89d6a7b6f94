import { execFileSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { problemType, PROBLEM_KINDS, type ProblemKind } from '../../server/http/problem.ts';
import { OPENAPI_FILE } from '../../server/openapi/write.ts';

// The committed OpenAPI document as other tools read it: a common linter (Redocly CLI's recommended
// rules) and the generator of the console's typed client (openapi-typescript).
const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
const bin = (name: string) => path.join(ROOT, 'node_modules', '.bin', name);

describe('the committed openapi/openapi.json', () => {
  it('passes Redocly CLI with its recommended rules: no error, no warning, nothing ignored', () => {
    // No ignore file and no configuration of our own may soften the rules.
    for (const file of ['.redocly.lint-ignore.yaml', 'redocly.yaml', '.redocly.yaml']) expect(existsSync(path.join(ROOT, file)), file).toBe(false);
    const out = execFileSync(bin('redocly'), ['lint', OPENAPI_FILE, '--format=json', '--extends=recommended'], { cwd: ROOT, encoding: 'utf8', stdio: ['ignore', 'pipe', 'ignore'] });
    const report = JSON.parse(out) as { totals: { errors: number; warnings: number; ignored: number }; problems: { ruleId: string; message: string }[] };
    expect(report.problems.map((p) => `${p.ruleId}: ${p.message}`)).toEqual([]);
    expect(report.totals).toEqual({ errors: 0, warnings: 0, ignored: 0 });
  });

  it('gives the console the typed client it has committed (run `npm run openapi` after changing a schema)', () => {
    const scratch = mkdtempSync(path.join(os.tmpdir(), 'gammaline-schema-'));
    try {
      const generated = path.join(scratch, 'schema.d.ts');
      execFileSync(bin('openapi-typescript'), [OPENAPI_FILE, '-o', generated, '--default-non-nullable', 'false'], { cwd: ROOT, stdio: 'ignore' });
      expect(readFileSync(generated, 'utf8')).toBe(readFileSync(path.join(ROOT, 'web', 'src', 'api', 'schema.d.ts'), 'utf8'));
    } finally {
      rmSync(scratch, { recursive: true, force: true });
    }
  });

  it('lists every problem type with its meaning, in the document and in README', () => {
    const doc = JSON.parse(readFileSync(OPENAPI_FILE, 'utf8')) as { info: { description: string } };
    const readme = readFileSync(path.join(ROOT, 'README.md'), 'utf8');
    for (const kind of Object.keys(PROBLEM_KINDS) as ProblemKind[]) {
      const row = `| ${PROBLEM_KINDS[kind].status} | \`${problemType(kind)}\` |`;
      expect(doc.info.description, kind).toContain(row);
      expect(readme, kind).toContain(row);
    }
  });
});
