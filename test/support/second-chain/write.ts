/**
 * Writes the second test chain to a folder:
 *
 *   npx tsx test/support/second-chain/write.ts --out DIR [--customers N] [--seed N] [--tiers overlapping|separated]
 *
 * Prints the generator's counts as one JSON object (the same as manifest.json, plus the folder).
 */
import { parseArgs } from 'node:util';
import { CHAIN_SIZE, generateSecondChain, type TierSpacing } from './generate.js';

const { values } = parseArgs({
  options: { out: { type: 'string' }, customers: { type: 'string' }, seed: { type: 'string' }, tiers: { type: 'string' } },
  strict: true,
});
if (!values.out) {
  process.stderr.write('usage: npx tsx test/support/second-chain/write.ts --out DIR [--customers N] [--seed N] [--tiers overlapping|separated]\n');
  process.exit(2);
}
const started = performance.now();
const result = generateSecondChain({
  outDir: values.out,
  customers: values.customers === undefined ? CHAIN_SIZE.defaultCustomers : Number(values.customers),
  seed: values.seed === undefined ? CHAIN_SIZE.defaultSeed : Number(values.seed),
  tiers: values.tiers as TierSpacing | undefined,
});
const { files: _files, ...counts } = result;
process.stdout.write(`${JSON.stringify({ ...counts, seconds: Number(((performance.now() - started) / 1000).toFixed(2)) })}\n`);
