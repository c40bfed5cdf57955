import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { checkInput, inputErrorFromZod } from '../../api/api-errors.js';
import { startRunInput, type RunSummary, type StartRunInput } from '../../api/contract.js';
import { InputError } from '../../errors.js';
import { requireExistingDatabase, withApi } from '../api-client.js';
import { runCommand, type RegisterCommand } from '../run-command.js';
import { describeQueueCounts, segmentationWords } from '../segment-words.js';
import { addSchemaOptions, componentGroups, inputFromFlags, numberOrText, schemaOptions } from '../schema-options.js';

interface RefreshCliOptions {
  db?: string;
  settings?: string;
  features?: string;
  segmentation?: string;
  transform: string[];
  json?: boolean;
  [flag: string]: unknown;
}

const collect = (value: string, previous: string[]) => [...previous, value];

/**
 * Every setting of a run as a flag (src/api/contract/settings.ts), except the features, which take
 * two, and the segmentation, a list of lists written "0,2;1;3".
 */
const settingFlags = schemaOptions(startRunInput.shape, ['features', 'segmentation']);

const percent = (share: number) => `${(share * 100).toFixed(1)}%`;

export function describeRun(summary: RunSummary): string {
  return [
    `Run ${summary.runId}${summary.parentRunId !== null ? ` (parent ${summary.parentRunId})` : ''}: k = ${summary.k} ${summary.covariance} components ` +
      `combined into ${summary.segmentCount} segment${summary.segmentCount === 1 ? '' : 's'} (${segmentationWords[summary.segmentation]}), BIC ${summary.bic.toFixed(1)}`,
    `  ${summary.customers} customers placed, ${summary.tooNew} too new to place; ${summary.borderline} borderline, ${summary.atypical} atypical`,
    ...summary.segments.map(
      (segment) => `  ${segment.name}: ${segment.customers} customers (${percent(segment.share)}), ${percent(segment.revenueShare)} of revenue`,
    ),
    `  review ${describeQueueCounts(summary.review)}`,
    ...summary.warnings.map((warning) => `  warning: ${warning}`),
    `  stability against the parent (adjusted Rand index): ${summary.stability === null ? 'n/a (first run)' : summary.stability.toFixed(3)}`,
  ].join('\n');
}


/** A run's settings from a JSON file (as `runs --settings-out` writes them): an object, or a clear refusal naming the file. */
function readSettingsFile(path: string): Record<string, unknown> {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (error) {
    throw new InputError(`Cannot read the settings file ${path}: ${error instanceof Error ? error.message : String(error)}`);
  }
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (error) {
    throw new InputError(`The settings file ${path} is not JSON: ${error instanceof Error ? error.message : String(error)}`);
  }
  if (typeof value !== 'object' || value === null || Array.isArray(value)) {
    throw new InputError(`The settings file ${path} must hold one JSON object of run settings (as "runs --settings-out" writes).`);
  }
  return value as Record<string, unknown>;
}

const transformSteps = 'log1p or cbrt (cube root), clip=LOW:HIGH (percentiles; leave a side empty for none), z, or none';

/**
 * `--features a,b` with `--transform feature=steps` for any of them: the features of the run, each
 * with exactly the steps given, or its default transform where none is given.
 */
function featuresFromFlags(names: string | undefined, transforms: readonly string[]): StartRunInput['features'] {
  if (names === undefined) {
    if (transforms.length > 0) throw new InputError('--transform applies to the features --features lists; give --features too.');
    return undefined;
  }
  const features: NonNullable<StartRunInput['features']> = names
    .split(',')
    .map((name) => name.trim())
    .filter((name) => name.length > 0)
    .map((feature) => ({ feature }));
  for (const text of transforms) {
    const at = text.indexOf('=');
    const feature = at > 0 ? text.slice(0, at).trim() : '';
    const target = features.find((spec) => spec.feature === feature);
    if (!target) throw new InputError(`--transform expects FEATURE=STEPS for a feature --features lists (${features.map((spec) => spec.feature).join(', ')}); got "${text}".`);
    Object.assign(target, { log1p: false, cubeRoot: false, zScore: false, clipLowerPercentile: null, clipUpperPercentile: null });
    for (const step of text.slice(at + 1).split(',').map((part) => part.trim())) {
      const clip = /^clip=([^:]*):([^:]*)$/.exec(step);
      if (step === 'log1p') target.log1p = true;
      else if (step === 'cbrt') target.cubeRoot = true;
      else if (step === 'z') target.zScore = true;
      else if (clip) {
        target.clipLowerPercentile = (clip[1].trim() === '' ? null : numberOrText(clip[1])) as number | null;
        target.clipUpperPercentile = (clip[2].trim() === '' ? null : numberOrText(clip[2])) as number | null;
      } else if (step !== 'none') throw new InputError(`--transform ${text}: the steps are ${transformSteps}; got "${step}".`);
    }
  }
  return features;
}

/**
 * The startRun input: the settings file (if any), then the flags given over it. A refusal of a
 * value that came from the file names the file; anything else is left to the API, which words it
 * as it does for the app.
 */
function runInput(options: RefreshCliOptions): Record<string, unknown> {
  const fromFlags = inputFromFlags(settingFlags, options);
  const features = featuresFromFlags(options.features, options.transform);
  if (features) fromFlags.features = features;
  if (options.segmentation !== undefined) fromFlags.segmentation = options.segmentation.trim() === 'none' ? null : componentGroups(options.segmentation);
  if (!options.settings) return fromFlags;
  const file = resolve(options.settings);
  const fromFile = readSettingsFile(file);
  const input = { ...fromFile, ...fromFlags };
  const checked = checkInput(startRunInput, input);
  if (!checked.ok && checked.error.issues.some((issue) => issue.path.length === 0 || (String(issue.path[0]) in fromFile && !(String(issue.path[0]) in fromFlags)))) {
    throw inputErrorFromZod(`the settings file ${file}`, checked.error, startRunInput);
  }
  return input;
}

/**
 * `spendmix refresh --db FILE --as-of YYYY-MM-DD [--settings FILE.json] [a flag per setting]`
 * (DESIGN.md §10): the startRun call the Model screen makes, with the same validation.
 */
export const registerRefresh: RegisterCommand = (program, io, setExitCode) => {
  const command = program
    .command('refresh')
    .description("Run this month's segmentation: features, fit (or the parent's model), memberships, names, movement, review queue.")
    .option('--db <file>', 'the Spendmix database')
    .option('--settings <file.json>', 'run settings as one JSON object (as "runs --settings-out" writes); flags given override it');
  addSchemaOptions(command, settingFlags)
    .option(
      '--features <a,b>',
      'model features, comma-separated (default from receipts: visits_per_month, average_basket, gaps_since_last_visit, and fresh_share where receipts carry departments; every imported feature otherwise)',
    )
    .option('--transform <feature=steps>', `a listed feature's transform, steps from ${transformSteps} (repeatable; default log1p,z for the money, rate and day features, cbrt,z for gaps_since_last_visit, z otherwise)`, collect, [])
    .option('--segmentation <groups>', 'segments as groups of component indices, groups separated by ";" (e.g. "0,2;1;3"; none: combined by --segment-count)')
    .option(
      '--json',
      'print one JSON object {runId, parentRunId, k, covariance, bic, segmentCount, segmentation, customers, tooNew, borderline, atypical, segments, stability, review, warnings}',
    )
    .action(async (options: RefreshCliOptions) => {
      const json = Boolean(options.json);
      setExitCode(
        await runCommand(io, json, async () => {
          const db = requireExistingDatabase(options.db, 'refresh');
          const input = runInput(options);
          const showProgress = !json && process.stderr.isTTY;
          const summary = await withApi(db, (api) =>
            api.run('startRun', input as StartRunInput, showProgress ? (progress) => io.stderr(`\r${progress.message}\x1b[K`) : undefined),
          );
          if (showProgress) io.stderr('\n');
          return { result: summary, human: describeRun };
        }),
      );
    });
};
