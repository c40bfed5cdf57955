/** What the database says about feature defaults: whether it has receipts, whether they carry departments, which features were imported. */
import type { Database } from 'better-sqlite3';
import type { FeatureData } from '../api/contract.js';

/** Asked lazily: the imported feature names are only read when a run needs them as its default. */
export function featureData(db: Database): FeatureData {
  return {
    hasReceipts: () => db.prepare('SELECT 1 FROM receipts LIMIT 1').get() !== undefined,
    hasDepartments: () => db.prepare('SELECT 1 FROM receipts WHERE category IS NOT NULL LIMIT 1').get() !== undefined,
    importedFeatureNames: () => db.prepare('SELECT DISTINCT feature FROM customer_features ORDER BY feature').pluck().all() as string[],
  };
}
