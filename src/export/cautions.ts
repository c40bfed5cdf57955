/**
 * The cautions of DESIGN.md §14, one paragraph per entry. They go on every workbook's overview
 * sheet and on the Export screen (the app reads them from here through the API's app info), so
 * a campaign team sees the same words as the analyst.
 */
export const cautions: readonly string[] = [
  'Segments drive who gets offers. Do not use protected characteristics or proxies for them as features.',
  "Respect marketing consent and local data-protection law; keep personal data on the analyst's machine.",
  'Treat segments as estimates: the review queue exists because some customers do not fit.',
  "Defer to the company's privacy and legal advice.",
];
