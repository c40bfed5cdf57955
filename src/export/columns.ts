/**
 * Column definitions shared by the XLSX and CSV writers: heading, width, how values are shown
 * (which fixes the number format) and how a value is taken from a row. One definition per sheet
 * kind, so a campaign list reads the same in Excel and in a CSV upload.
 */
import { featureDescriptions, featureLabel, isComputedFeature } from '../features/definitions.js';
import type { ExportCustomerRow, ExportReviewRow, FeatureColumn, ValueKind } from './source.js';

export type CellValue = string | number | Date | null;

export interface Column<Row> {
  header: string;
  /** Width in characters. */
  width: number;
  kind: ValueKind;
  value: (row: Row) => CellValue;
}

/** Excel number formats per kind; text has none (written as inline strings). */
export const numberFormats: Record<ValueKind, string | null> = {
  eur: '#,##0.00 "EUR"',
  share: '0.0%',
  probability: '0.000',
  count: '#,##0',
  decimal: '0.00',
  number: 'General',
  text: null,
  date: 'yyyy-mm-dd',
  datetime: 'yyyy-mm-dd hh:mm',
};

const defaultWidths: Record<ValueKind, number> = {
  eur: 16,
  share: 10,
  probability: 12,
  count: 12,
  decimal: 12,
  number: 12,
  text: 24,
  date: 12,
  datetime: 17,
};

/** How a stored feature is shown, from its unit (DESIGN.md §4); imported features as plain decimals. */
export function featureColumn(key: string): FeatureColumn {
  if (!isComputedFeature(key)) return { key, header: capitalise(featureLabel(key)), kind: 'decimal' };
  const { label, unit } = featureDescriptions[key];
  const kind: ValueKind =
    unit === 'EUR' || unit === 'EUR per month'
      ? 'eur'
      : unit === 'share'
        ? 'share'
        : unit === 'days' || unit === 'purchases'
          ? 'count'
          : 'decimal';
  const unitText = unit === '' || unit === 'share' ? '' : ` (${unit})`;
  return { key, header: `${capitalise(label)}${unitText}`, kind };
}

export function capitalise(text: string): string {
  return text.length === 0 ? text : text[0].toUpperCase() + text.slice(1);
}

function column<Row>(header: string, kind: ValueKind, value: (row: Row) => CellValue, width = defaultWidths[kind]): Column<Row> {
  return { header, kind, value, width: Math.max(width, Math.min(40, header.length + 2)) };
}

/** "borderline, atypical", or null when neither. */
export function flagsText(borderline: boolean, atypical: boolean): string | null {
  if (borderline && atypical) return 'borderline, atypical';
  if (borderline) return 'borderline';
  return atypical ? 'atypical' : null;
}

export function consentText(consent: 0 | 1 | null): string {
  return consent === 1 ? 'yes' : consent === 0 ? 'no' : 'unknown';
}

/** Customer columns of DESIGN.md §8, then the given features in original units. */
export function customerColumns(features: readonly FeatureColumn[]): Column<ExportCustomerRow>[] {
  return [
    column<ExportCustomerRow>('Customer id', 'text', (row) => row.customerId, 16),
    column<ExportCustomerRow>('Final segment', 'text', (row) => row.finalSegmentName, 26),
    column<ExportCustomerRow>('Model segment', 'text', (row) => row.modelSegmentName, 26),
    column<ExportCustomerRow>('Confidence', 'probability', (row) => row.confidence),
    column<ExportCustomerRow>('Second segment', 'text', (row) => row.secondSegmentName, 26),
    column<ExportCustomerRow>('Second probability', 'probability', (row) => row.secondProbability),
    column<ExportCustomerRow>('Flags', 'text', (row) => flagsText(row.borderline, row.atypical), 20),
    column<ExportCustomerRow>('Review decision', 'text', (row) => row.decision, 16),
    column<ExportCustomerRow>('Marketing consent', 'text', (row) => consentText(row.marketingConsent), 18),
    column<ExportCustomerRow>('Spend in window (EUR)', 'eur', (row) => row.revenue),
    ...features.map((feature) => column<ExportCustomerRow>(feature.header, feature.kind, (row) => row.features[feature.key] ?? null)),
  ];
}

/** Review sheet: every listed queued customer with reason, top two segments, decision, note, reviewer, time. */
export function reviewColumns(): Column<ExportReviewRow>[] {
  return [
    column<ExportReviewRow>('Customer id', 'text', (row) => row.customerId, 16),
    column<ExportReviewRow>('Reason', 'text', (row) => row.reasons.join(', '), 22),
    column<ExportReviewRow>('Spend in window (EUR)', 'eur', (row) => row.revenue),
    column<ExportReviewRow>('Top segment', 'text', (row) => row.topSegmentName, 26),
    column<ExportReviewRow>('Top probability', 'probability', (row) => row.topProbability),
    column<ExportReviewRow>('Second segment', 'text', (row) => row.secondSegmentName, 26),
    column<ExportReviewRow>('Second probability', 'probability', (row) => row.secondProbability),
    column<ExportReviewRow>('Decision', 'text', (row) => row.decision, 12),
    column<ExportReviewRow>('Placed in', 'text', (row) => row.decidedSegmentName, 26),
    column<ExportReviewRow>('Note', 'text', (row) => row.note, 40),
    column<ExportReviewRow>('Reviewer', 'text', (row) => row.reviewer, 16),
    column<ExportReviewRow>('Decided at', 'datetime', (row) => (row.decidedAt === null ? null : new Date(row.decidedAt))),
  ];
}

/** Movement sheet rows: one per parent segment; columns: current segments, then the row total. */
export interface MovementRow {
  label: string;
  counts: readonly number[];
}

export function movementColumns(currentSegments: readonly string[]): Column<MovementRow>[] {
  return [
    column<MovementRow>('Last month \\ this month', 'text', (row) => row.label, 28),
    ...currentSegments.map((name, index) => column<MovementRow>(name, 'count', (row) => row.counts[index] ?? null)),
    column<MovementRow>('Total', 'count', (row) => row.counts.reduce((sum, count) => sum + count, 0)),
  ];
}
