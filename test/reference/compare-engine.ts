/**
 * Prints our engine's fits next to the recorded scikit-learn ones: log L per dataset, structure
 * and k; parameter gaps after Hungarian matching; BIC-sweep winners. The same comparisons, as
 * pass/fail checks, are in engine-vs-sklearn.test.ts; this prints the table for people.
 *
 *   npx tsx test/reference/compare-engine.ts
 */
import { covarianceTypes } from '../../src/model/index.js';
import { bicWinner, fitsLikeRecorded, loadRecordedResults, parameterGap, readReferenceMatrix, sweepLikeRecorded } from './sklearn-reference.js';

const recorded = loadRecordedResults();
const started = performance.now();
console.log(`scikit-learn ${recorded.versions.sklearn}, numpy ${recorded.versions.numpy}; both: 10 starts, tol 1e-6, max 1000 iterations, reg 1e-6`);
const fitLines = ['dataset   structure  k   p     ours log L   sklearn log L  (ours−sk)/|sk|  |Δweight|  |Δmean|/sd  |Δcov|/sd²'];
const sweepLines = ['dataset   structure  winner ours/sk  BIC k=1..6 (ours: sweepMixtures on worker threads)'];
for (const [name, dataset] of Object.entries(recorded.datasets)) {
  const { data } = readReferenceMatrix(dataset.file);
  const sweep = await sweepLikeRecorded(data, recorded, dataset);
  for (const covarianceType of covarianceTypes) {
    const fits = fitsLikeRecorded(data, covarianceType, recorded, dataset);
    for (const reference of dataset.fits.filter((fit) => fit.covariance === covarianceType)) {
      const ours = fits.get(reference.k)!;
      const relative = (ours.logLikelihood - reference.logLikelihood) / Math.abs(reference.logLikelihood);
      const gap = parameterGap(ours, reference);
      fitLines.push(
        [
          name.padEnd(9),
          covarianceType.padEnd(10),
          String(reference.k).padStart(2),
          String(ours.parameterCount).padStart(3),
          ours.logLikelihood.toFixed(6).padStart(14),
          reference.logLikelihood.toFixed(6).padStart(15),
          relative.toExponential(2).padStart(15),
          gap.weight.toExponential(1).padStart(10),
          gap.mean.toExponential(1).padStart(11),
          gap.covariance.toExponential(1).padStart(10),
        ].join(' '),
      );
    }
    const reference = dataset.bicSweep.structures.find((entry) => entry.covariance === covarianceType)!;
    const ourRows = sweep.table.filter((row) => row.covariance === covarianceType);
    sweepLines.push(`${name.padEnd(9)} ${covarianceType.padEnd(10)} ${bicWinner(ourRows)} / ${reference.winnerK}           ours ${ourRows.map((row) => row.bic.toFixed(2)).join(' ')}`);
    sweepLines.push(`${''.padEnd(37)}sk   ${reference.table.map((row) => row.bic.toFixed(2)).join(' ')}`);
  }
}
console.log(fitLines.join('\n'));
console.log('\nBIC sweep, k = 1..6 per structure');
console.log(sweepLines.join('\n'));
console.log(`\n(${((performance.now() - started) / 1000).toFixed(1)} s for all fits)`);
