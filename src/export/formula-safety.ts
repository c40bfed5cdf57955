/**
 * Formula-injection safety for every text cell Spendmix writes, in XLSX and in CSV alike.
 *
 * A spreadsheet treats a cell whose first character is `=`, `+`, `-` or `@` as a formula, and
 * tab, carriage return, line feed and NUL at the start are used to smuggle one past filters.
 * OWASP's guidance (ASVS 5.0 requirement 1.2.10; the OWASP community page "CSV Injection")
 * is to prefix such a value with a single quote so it is shown as the text it is. Numbers are
 * written as numbers and never pass through here, so a negative amount stays a number.
 */

/** First characters that make a spreadsheet read a text cell as a formula (OWASP). */
export const formulaTriggerCharacters: readonly string[] = ['=', '+', '-', '@', '\t', '\r', '\n', '\0'];

const triggers = new Set(formulaTriggerCharacters);

/** The text as it must be written: with a leading apostrophe when it starts with a trigger. */
export function neutraliseFormulaText(text: string): string {
  return text.length > 0 && triggers.has(text[0]) ? `'${text}` : text;
}
