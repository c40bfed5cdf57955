import type { Database } from 'better-sqlite3';

/** 1 = consented, 0 = refused, null = unknown (treated as no consent by exports). */
export type Consent = 0 | 1 | null;

export interface CustomerRecord {
  customerId: string;
  /** ISO date or null. */
  joined: string | null;
  marketingConsent: Consent;
  homeStore: string | null;
}

/** Marketing consent of every customer in the customers table; customers absent here are unknown. */
export function customerConsent(db: Database): Map<string, Consent> {
  const consent = new Map<string, Consent>();
  const rows = db.prepare('SELECT customer_id, marketing_consent FROM customers').raw().iterate() as Iterable<[string, Consent]>;
  for (const [customerId, value] of rows) consent.set(customerId, value);
  return consent;
}

export function getCustomer(db: Database, customerId: string): CustomerRecord | undefined {
  const row = db
    .prepare('SELECT customer_id, joined, marketing_consent, home_store FROM customers WHERE customer_id = ?')
    .get(customerId) as { customer_id: string; joined: string | null; marketing_consent: Consent; home_store: string | null } | undefined;
  return row
    ? { customerId: row.customer_id, joined: row.joined, marketingConsent: row.marketing_consent, homeStore: row.home_store }
    : undefined;
}

/** Row counts of the data tables (what `demo --db` and the Sources screen show). */
export function tableCounts(db: Database): { customers: number; receipts: number; visits: number; stores: number; features: number } {
  const count = (table: string) => (db.prepare(`SELECT count(*) AS n FROM ${table}`).get() as { n: number }).n;
  return {
    customers: count('customers'),
    receipts: count('receipts'),
    visits: count('visits'),
    stores: count('stores'),
    features: count('customer_features'),
  };
}
