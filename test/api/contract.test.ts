import { readdirSync, readFileSync } from 'node:fs';
import ts from 'typescript';
import { describe, expect, it } from 'vitest';
import {
  apiSchemas,
  covarianceTypes,
  csvDialects,
  exportFormats,
  explicitRunSettings,
  importEncodings,
  importKinds,
  initMethods,
  longTaskMethods,
  startRunInput,
} from '../../src/api/contract.js';
import { csvDialects as csvWriterDialects } from '../../src/export/csv-writer.js';
import { exportFormats as exportWriterFormats } from '../../src/export/export-run.js';
import { ENCODING_CHOICES } from '../../src/ingest/file-probe.js';
import { covarianceTypes as engineCovarianceTypes, initMethods as engineInitMethods } from '../../src/model/types.js';
import { IMPORT_KINDS } from '../../src/store/imports-repo.js';

describe('the API contract', () => {
  it('imports nothing but zod and its own parts, so the renderer can take its types without Node modules', () => {
    const folder = new URL('../../src/api/contract/', import.meta.url);
    const files = ['../contract.ts', ...readdirSync(folder)];
    expect(files.length).toBeGreaterThan(5);
    for (const file of files) {
      const source = readFileSync(new URL(file, folder), 'utf8');
      const imports = ts.preProcessFile(source, true, true).importedFiles.map((imported) => imported.fileName);
      for (const imported of imports) expect(imported === 'zod' || /^\.\/(contract\/)?[a-z-]+\.js$/.test(imported), `${file} imports ${imported}`).toBe(true);
    }
  });

  it('fills the documented defaults of a run (DESIGN.md §4–§5) and refuses a reversed k range', () => {
    expect(startRunInput.parse({ asOf: '2026-11-30' })).toMatchObject({
      windowMonths: 12,
      mode: 'refit',
      k: 'auto',
      kMin: 2,
      kMax: 8,
      covariance: 'diag',
      criterion: 'bic',
      restarts: 5,
      borderlineConfidence: 0.7,
      borderlineMargin: 0.2,
      atypicalPercentile: 1,
      minPurchases: 2,
      minTenureMonths: 2,
      tol: 1e-3,
      maxIterations: 200,
      regularization: 1e-6,
      init: 'mixed',
      reviewMoversBelowConfidence: null,
    });
    const reversed = startRunInput.safeParse({ asOf: '2026-11-30', kMin: 6, kMax: 3 });
    expect(reversed.success).toBe(false);
    expect(reversed.error?.issues.map((issue) => issue.path.join('.'))).toEqual(['kMin']);
  });

  it('refuses more segments than kMax with k auto, before any fit', () => {
    const tooMany = startRunInput.safeParse({ asOf: '2026-11-30', segmentCount: 9 });
    expect(tooMany.error?.issues.map((issue) => [issue.path.join('.'), issue.message])).toEqual([
      ['segmentCount', 'must not exceed kMax (--k-max) with k auto: a segment is one or more components'],
    ]);
    expect(startRunInput.safeParse({ asOf: '2026-11-30', segmentCount: 8 }).success).toBe(true);
  });

  it('rejects unknown fields everywhere, so a misspelt option is never silently ignored', () => {
    for (const [method, schema] of Object.entries(apiSchemas)) {
      const result = schema.safeParse({ runId: 1, taskId: 't', path: 'x', kind: 'receipts', asOf: '2026-11-30', zzUnknown: 1 });
      expect(result.success, method).toBe(false);
      expect(result.error?.issues.some((issue) => issue.code === 'unrecognized_keys'), method).toBe(true);
    }
    expect(longTaskMethods.every((method) => method in apiSchemas)).toBe(true);
  });

  it('makes the data-dependent choices explicit: source, default features and each feature\'s transform', () => {
    const settings = startRunInput.parse({ asOf: '2026-11-30', features: [{ feature: 'spend_per_month' }, { feature: 'fresh_share', clipUpperPercentile: 99 }] });
    const data = (hasReceipts: boolean, hasDepartments = true) => ({
      hasReceipts: () => hasReceipts,
      hasDepartments: () => hasDepartments,
      importedFeatureNames: () => ['loyalty_points', 'tenure'],
    });
    expect(explicitRunSettings(settings, data(true)).features).toEqual([
      { feature: 'spend_per_month', log1p: true, cubeRoot: false, clipLowerPercentile: null, clipUpperPercentile: null, zScore: true },
      { feature: 'fresh_share', log1p: false, cubeRoot: false, clipLowerPercentile: null, clipUpperPercentile: 99, zScore: true },
    ]);
    const defaults = startRunInput.parse({ asOf: '2026-11-30' });
    // How often, how much per trip, how recently, and the mix where the receipts carry departments; never spend next to visits and basket.
    expect(explicitRunSettings(defaults, data(true)).features).toEqual([
      { feature: 'visits_per_month', log1p: true, cubeRoot: false, clipLowerPercentile: null, clipUpperPercentile: null, zScore: true },
      { feature: 'average_basket', log1p: true, cubeRoot: false, clipLowerPercentile: null, clipUpperPercentile: null, zScore: true },
      { feature: 'gaps_since_last_visit', log1p: false, cubeRoot: true, clipLowerPercentile: null, clipUpperPercentile: null, zScore: true },
      { feature: 'fresh_share', log1p: false, cubeRoot: false, clipLowerPercentile: null, clipUpperPercentile: null, zScore: true },
    ]);
    expect(explicitRunSettings(defaults, data(true, false)).features.map((spec) => spec.feature)).toEqual(['visits_per_month', 'average_basket', 'gaps_since_last_visit']);
    // One shaping step: asking for one of log1p and the cube root turns the default other off; both at once is refused.
    const shaped = startRunInput.parse({ asOf: '2026-11-30', features: [{ feature: 'gaps_since_last_visit', log1p: true }, { feature: 'visits_per_month', cubeRoot: true }] });
    expect(explicitRunSettings(shaped, data(true)).features.map((spec) => [spec.feature, spec.log1p, spec.cubeRoot])).toEqual([
      ['gaps_since_last_visit', true, false],
      ['visits_per_month', false, true],
    ]);
    const both = startRunInput.safeParse({ asOf: '2026-11-30', features: [{ feature: 'visits_per_month', log1p: true, cubeRoot: true }] });
    expect(both.success).toBe(false);
    expect(both.error!.issues[0]).toMatchObject({ path: ['features', 0, 'cubeRoot'], message: 'choose log1p or the cube root, not both' });
    const imported = explicitRunSettings(defaults, data(false));
    expect(imported.source).toBe('imported');
    expect(imported.features.map((spec) => [spec.feature, spec.log1p, spec.zScore])).toEqual([
      ['loyalty_points', false, true],
      ['tenure', false, true],
    ]);
  });

  it('lists the same choices as the parts of the core that check their own arguments', () => {
    expect([...covarianceTypes]).toEqual([...engineCovarianceTypes]);
    expect([...initMethods]).toEqual([...engineInitMethods]);
    expect([...importKinds]).toEqual([...IMPORT_KINDS]);
    expect([...exportFormats]).toEqual([...exportWriterFormats]);
    expect([...csvDialects]).toEqual([...csvWriterDialects]);
    expect([...importEncodings]).toEqual([...ENCODING_CHOICES]);
  });
});
