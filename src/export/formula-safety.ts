/**
 * Formula-injection safety for every text cell Spendmix writes (DESIGN.md §8).
 *
 * A spreadsheet treats a cell whose first character is `=`, `+`, `-` or `@` as a formula, and
 * tab, carriage return, line feed and NUL at the start are used to smuggle one past filters
 * (OWASP ASVS 5.0 requirement 1.2.10; the OWASP community page "CSV Injection").
 *
 * - XLSX: such text is written as what it is, a text cell, unchanged, with the quote-prefix cell
 *   style and the text number format (xlsx-package-extras.ts), so it stays text when a user edits
 *   the cell. A text cell in a workbook is never evaluated, so no character is added to the value:
 *   an id like `-4x` reaches the campaign system as `-4x`.
 * - CSV: a CSV has no cell types, so a spreadsheet program decides what each field is. By default
 *   such text gets a leading apostrophe (OWASP's advice) so that a person opening the list sees
 *   text; an option writes it raw for lists another system reads by id.
 *
 * Numbers are written as numbers and never pass through here, so a negative amount stays a number.
 */

/** First characters that make a spreadsheet read a text cell as a formula (OWASP). */
export const formulaTriggerCharacters: readonly string[] = ['=', '+', '-', '@', '\t', '\r', '\n', '\0'];

const triggers = new Set(formulaTriggerCharacters);

/** Whether a spreadsheet program would take this text for a formula. */
export function startsLikeFormula(text: string): boolean {
  return text.length > 0 && triggers.has(text[0]);
}

/** The text as a CSV list for people writes it: with a leading apostrophe when it starts with a trigger. */
export function neutraliseFormulaText(text: string): string {
  return startsLikeFormula(text) ? `'${text}` : text;
}
