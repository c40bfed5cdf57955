import { readFileSync } from 'node:fs';
import ts from 'typescript';
import { describe, expect, it } from 'vitest';
import { apiSchemas, longTaskMethods, startRunInput } from '../../src/api/contract.js';

describe('the API contract', () => {
  it('imports nothing but zod, so the renderer can take its types without Node modules', () => {
    const source = readFileSync(new URL('../../src/api/contract.ts', import.meta.url), 'utf8');
    const imports = ts.preProcessFile(source, true, true).importedFiles.map((file) => file.fileName);
    expect(imports).toEqual(['zod']);
  });

  it('fills the documented defaults of a run (DESIGN.md §4–§5) and refuses a reversed k range', () => {
    expect(startRunInput.parse({ asOf: '2026-11-30' })).toMatchObject({
      windowMonths: 12,
      mode: 'refit',
      k: 'auto',
      kMin: 2,
      kMax: 8,
      covariance: 'auto',
      criterion: 'bic',
      restarts: 5,
      borderlineConfidence: 0.7,
      borderlineMargin: 0.2,
      atypicalPercentile: 1,
      minPurchases: 2,
      minTenureMonths: 2,
    });
    const reversed = startRunInput.safeParse({ asOf: '2026-11-30', kMin: 6, kMax: 3 });
    expect(reversed.success).toBe(false);
    expect(reversed.error?.issues.map((issue) => issue.path.join('.'))).toEqual(['kMin']);
  });

  it('rejects unknown fields everywhere, so a misspelt option is never silently ignored', () => {
    for (const [method, schema] of Object.entries(apiSchemas)) {
      const result = schema.safeParse({ runId: 1, taskId: 't', path: 'x', kind: 'receipts', asOf: '2026-11-30', zzUnknown: 1 });
      expect(result.success, method).toBe(false);
      expect(result.error?.issues.some((issue) => issue.code === 'unrecognized_keys'), method).toBe(true);
    }
    expect(longTaskMethods.every((method) => method in apiSchemas)).toBe(true);
  });
});
