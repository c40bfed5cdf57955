/**
 * The text of a generated query: common table expressions ("layers"), each one SELECT over the
 * layer before it, one column per line so that a reader can follow the arithmetic.
 */

/** `name AS [MATERIALIZED] (SELECT … FROM source …)`; `rest` follows FROM (WHERE, GROUP BY, HAVING). */
export function layer(name: string, computedOnce: string, columns: readonly string[], source: string, rest: readonly string[] = []): string {
  return [`${name} AS ${computedOnce}(`, `  SELECT ${columns.join(',\n         ')}`, `    FROM ${source}`, ...rest.map((line) => `   ${line}`), ')'].join('\n');
}

/** Sum of terms left to right, as a loop adds them: ((a + b) + c). */
export function sum(terms: readonly string[]): string {
  return terms.reduce((total, term) => `(${total} + ${term})`);
}
