import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { runCli } from '../../src/cli/program.js';
import { fitMixture } from '../../src/model/index.js';
import { fitSettings, referenceData } from './support.js';

const faithfulCsv = fileURLToPath(new URL('../reference/data/faithful.csv', import.meta.url)); // R's datasets::faithful
const folder = mkdtempSync(join(tmpdir(), 'spendmix-fit-matrix-'));

async function run(...argv: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const code = await runCli(argv, { stdout: (text) => (stdout += text), stderr: (text) => (stderr += text) });
  return { code, stdout, stderr };
}

function file(name: string, text: string): string {
  const path = join(folder, name);
  writeFileSync(path, text);
  return path;
}

describe('spendmix fit-matrix', () => {
  it('prints the fit as one JSON object with the documented fields, equal to the engine', async () => {
    const { code, stdout } = await run('fit-matrix', '--input', faithfulCsv, '--k', '2', '--covariance', 'full', '--seed', '4', '--json');
    expect(code).toBe(0);
    const result = JSON.parse(stdout);
    expect(Object.keys(result)).toEqual(['n', 'd', 'k', 'covariance', 'logLikelihood', 'meanLogLikelihood', 'bic', 'aic', 'icl', 'weights', 'means', 'covariances', 'converged', 'iterations', 'seconds']);
    const engine = fitMixture(referenceData('faithful'), { ...fitSettings, components: 2, covarianceType: 'full', seed: 4 });
    expect(result).toMatchObject({ n: 272, d: 2, k: 2, covariance: 'full', logLikelihood: engine.logLikelihood, bic: engine.bic, icl: engine.icl });
    expect(result.means).toEqual([Array.from(engine.model.means.subarray(0, 2)), Array.from(engine.model.means.subarray(2, 4))]);
    expect(result.covariances[1][0][1]).toBe(engine.model.covariances[4 + 1]);
    expect(result.seconds).toBeGreaterThan(0);
  });

  it('chooses k by BIC with --k auto and writes memberships', async () => {
    const out = join(folder, 'memberships.csv');
    const { code, stdout } = await run('fit-matrix', '--input', faithfulCsv, '--k', 'auto', '--k-max', '4', '--covariance', 'full', '--init', 'kmeans++', '--memberships', out, '--json');
    expect(code).toBe(0);
    expect(JSON.parse(stdout).k).toBe(2);
    expect(JSON.parse(stdout).refusedFits).toEqual([]);
    const lines = readFileSync(out, 'utf8').trim().split('\n');
    expect(lines[0]).toBe('row,segment,posterior_1,posterior_2,confidence,margin,log_density');
    expect(lines).toHaveLength(273);
    for (const line of lines.slice(1)) {
      const [, segment, first, second, confidence, margin] = line.split(',').map(Number);
      expect(first + second).toBeCloseTo(1, 12);
      expect(confidence).toBe(Math.max(first, second));
      expect(margin).toBeCloseTo(Math.abs(first - second), 12);
      expect(segment).toBe(first >= second ? 1 : 2);
    }
  });

  it('leaves out text columns, reads ; delimited files with a BOM, and prints a human summary', async () => {
    const path = file('labelled.csv', `\uFEFFid;x;y\n${Array.from({ length: 60 }, (_, i) => `c${i};${i % 2 ? i : -i};${(i * 7) % 11}`).join('\n')}\n`);
    const { code, stdout } = await run('fit-matrix', '--input', path, '--k', '2', '--covariance', 'diag');
    expect(code).toBe(0);
    expect(stdout).toMatch(/Left out non-numeric column\(s\): id/);
    expect(stdout).toMatch(/Fitted 2 diag component\(s\) to 60 rows × 2 columns/);
  });

  it('lists the fits --k auto refused, with their reasons, and never chooses one', async () => {
    // Three distinct points, six rows each: 2 and 3 components put a component on one or two points.
    const path = file('three-points.csv', `x,y\n${Array.from({ length: 6 }, () => '0,0\n1,0\n0,1').join('\n')}\n`);
    const { code, stdout } = await run('fit-matrix', '--input', path, '--k', 'auto', '--k-max', '3', '--covariance', 'full', '--json');
    expect(code).toBe(0);
    const result = JSON.parse(stdout);
    expect(result.k).toBe(1);
    expect(result.refusedFits.map((fit: { k: number }) => fit.k)).toEqual([2, 3]);
    expect(result.refusedFits[0]).toMatchObject({ covariance: 'full', reason: expect.stringMatching(/held up by the regularisation floor/) });
    const human = await run('fit-matrix', '--input', path, '--k', 'auto', '--k-max', '3', '--covariance', 'full');
    expect(human.stdout).toMatch(/^2 .* refused: component \d of 2 is held up/m);
  });

  it('exits 2 saying what to change when every fit is refused, and warns about a refused fixed-k fit', async () => {
    // Every row on the line y = 2x: no fit has spread across the line but the ridge.
    const line = file('line.csv', `x,y\n${Array.from({ length: 30 }, (_, i) => `${i},${2 * i}`).join('\n')}\n`);
    const auto = await run('fit-matrix', '--input', line, '--k', 'auto', '--k-max', '2', '--covariance', 'full');
    expect(auto.code).toBe(2);
    expect(auto.stderr).toMatch(/Every fit was refused: .* Try fewer components, other features, or a larger regularisation\./);
    const fixed = await run('fit-matrix', '--input', line, '--k', '1', '--covariance', 'full', '--json');
    expect(fixed.code).toBe(0);
    expect(fixed.stderr).toMatch(/warning: this fit would be refused in a choice of k: component 1 of 1 is held up by the regularisation floor/);
  });

  it('caps --k auto at the largest k the rows support, and says so', async () => {
    // 20 rows, d = 2, full: k = 3 has 3 · 3 + 6 + 2 = 17 parameters (< 20), k = 4 has 23.
    const path = file('small.csv', `a,b\n${Array.from({ length: 20 }, (_, i) => `${i + 1},${((i + 1) ** 2) % 7}`).join('\n')}\n`);
    const { code, stderr } = await run('fit-matrix', '--input', path, '--k', 'auto', '--covariance', 'full', '--json');
    expect(code).toBe(0);
    expect(stderr).toMatch(/20 rows support at most k = 3 with full covariance/);
  });

  it('exits 2 with the row and column of a non-numeric cell', async () => {
    const path = file('bad-cell.csv', 'a,b\n1,2\n3,4\n5,oops\n7,8\n');
    const { code, stderr } = await run('fit-matrix', '--input', path, '--k', '1', '--covariance', 'full');
    expect(code).toBe(2);
    expect(stderr).toMatch(/Non-numeric value "oops" at row 3, column "b" \(column 2\)/);
    const empty = file('empty-cell.csv', 'a,b\n1,2\n,4\n');
    expect((await run('fit-matrix', '--input', empty, '--k', '1', '--covariance', 'full')).stderr).toMatch(/an empty cell at row 2, column "a"/);
  });

  it('exits 2 for an empty file, k < 1, an unknown structure, a missing file and missing options', async () => {
    const empty = file('empty.csv', '');
    const cases: [string[], RegExp][] = [
      [['--input', empty, '--k', '2', '--covariance', 'full'], /is empty/],
      [['--input', faithfulCsv, '--k', '0', '--covariance', 'full'], /\(k, --k\) must be at least 1 \(got 0\)/],
      [['--input', faithfulCsv, '--k', 'two', '--covariance', 'full'], /\(k, --k\) must be a number or "auto" \(got "two"\)/],
      [['--input', faithfulCsv, '--k', '2', '--covariance', 'round'], /\(covariance, --covariance\) must be one of full, diag, spherical, tied \(got "round"\)/],
      [['--input', faithfulCsv, '--k', '2'], /\(covariance, --covariance\) is required/],
      [['--input', join(folder, 'nowhere.csv'), '--k', '2', '--covariance', 'full'], /Cannot read --input/],
      [['--input', faithfulCsv, '--k', '2', '--covariance', 'full', '--init', 'best'], /\(init, --init\) must be one of mixed, hierarchical, kmeans, kmeans\+\+, random, random-partition \(got "best"\)/],
      [['--input', faithfulCsv, '--k', '2', '--covariance', 'full', '--k-max', '4'], /\(kMax, --k-max\) applies only with k auto \(--k auto\)/],
      [['--input', faithfulCsv, '--k', '200', '--covariance', 'full'], /too few/],
    ];
    for (const [argv, message] of cases) {
      const { code, stderr } = await run('fit-matrix', ...argv);
      expect(code, argv.join(' ')).toBe(2);
      expect(stderr).toMatch(message);
    }
  });
});
