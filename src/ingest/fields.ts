import type { ImportKind } from '../store/imports-repo.js';

/** A field a file of some kind can provide, with the column names that map to it automatically. */
export interface FieldSpec {
  name: string;
  required: boolean;
  /** Lower-case header spellings accepted without --map (besides the field's own name). */
  synonyms: readonly string[];
}

const CUSTOMER_ID: FieldSpec = {
  name: 'customer_id',
  required: true,
  synonyms: ['customer', 'customerid', 'customer id', 'customer no', 'customer number', 'card', 'card id', 'card_id', 'card number', 'card_number', 'loyalty id', 'loyalty_id', 'member', 'member id', 'member_id', 'client id', 'client_id'],
};
const DATE: FieldSpec = {
  name: 'date',
  required: true,
  synonyms: ['day', 'datetime', 'date time', 'date_time', 'timestamp', 'purchase date', 'purchase_date', 'transaction date', 'transaction_date', 'receipt date', 'visit date', 'visit_date'],
};
/** A separate time-of-day column, for files that split date and time. */
const TIME: FieldSpec = { name: 'time', required: false, synonyms: ['time of day', 'hour', 'purchase time', 'visit time'] };
const STORE_ID: FieldSpec = {
  name: 'store_id',
  required: false,
  synonyms: ['store', 'storeid', 'store id', 'store no', 'store number', 'shop', 'shop id', 'shop_id', 'branch', 'branch id', 'branch_id', 'location', 'location_id'],
};

/** The fields of each kind (DESIGN.md §3). Features files carry customer_id plus numeric columns. */
export const KIND_FIELDS: Record<ImportKind, readonly FieldSpec[]> = {
  receipts: [
    CUSTOMER_ID,
    DATE,
    TIME,
    {
      name: 'amount',
      required: true,
      synonyms: ['total', 'value', 'spend', 'sales', 'amount eur', 'amount_eur', 'net amount', 'net_amount', 'gross amount', 'revenue', 'price', 'sum'],
    },
    { name: 'receipt_id', required: false, synonyms: ['receipt', 'receiptid', 'receipt id', 'receipt no', 'receipt number', 'receipt_number', 'transaction', 'transaction id', 'transaction_id', 'ticket', 'ticket id', 'ticket_id', 'basket id', 'basket_id', 'order id', 'order_id'] },
    STORE_ID,
    { name: 'category', required: false, synonyms: ['department', 'dept', 'section', 'product category', 'product_category', 'category name'] },
    { name: 'items', required: false, synonyms: ['item count', 'item_count', 'items count', 'quantity', 'qty', 'units', 'number of items', 'articles'] },
  ],
  visits: [
    CUSTOMER_ID,
    DATE,
    TIME,
    STORE_ID,
    { name: 'channel', required: false, synonyms: ['visit type', 'visit_type', 'source', 'medium', 'type'] },
  ],
  customers: [
    CUSTOMER_ID,
    { name: 'joined', required: false, synonyms: ['join date', 'join_date', 'joined on', 'signup date', 'signup_date', 'sign-up date', 'enrolled', 'enrolment date', 'enrollment date', 'member since', 'registered', 'registration date', 'since'] },
    { name: 'marketing_consent', required: false, synonyms: ['consent', 'marketing consent', 'opt in', 'opt-in', 'opt_in', 'optin', 'marketing opt in', 'marketing_opt_in', 'email consent', 'permission', 'marketing'] },
    { name: 'home_store', required: false, synonyms: ['home store', 'homestore', 'home store id', 'home_store_id', 'preferred store', 'preferred_store', 'main store', 'main_store'] },
  ],
  features: [CUSTOMER_ID],
};

/** Header cell → comparison key: case, surrounding space and a BOM do not matter. */
export function normaliseHeader(header: string): string {
  return header.replace(/^\uFEFF/, '').trim().toLowerCase().replace(/\s+/g, ' ');
}

export function fieldNames(kind: ImportKind): string[] {
  return KIND_FIELDS[kind].map((field) => field.name);
}

/** One line per field for the mapping screen. */
export const FIELD_DESCRIPTIONS: Record<string, string> = {
  customer_id: 'Loyalty customer identifier (card or member number).',
  date: 'Date or date-time: ISO (2026-03-01, 2026-03-01T14:05), or day-first / month-first when chosen.',
  time: 'Time of day, for files that keep it apart from the date.',
  amount: 'Amount paid in EUR; negative for refunds. Decimal point, or decimal comma when chosen.',
  receipt_id: 'Receipt (till slip) number; with category it identifies a department row.',
  store_id: 'Store identifier; unknown ones are recorded.',
  category: 'Department or product category of the row.',
  items: 'Number of items on the row (whole number).',
  channel: 'Where the visit happened, e.g. store or online.',
  joined: 'Date the customer joined the loyalty programme.',
  marketing_consent: 'Marketing consent: yes or no (empty = unknown, treated as no).',
  home_store: 'The customer’s home store identifier.',
};
