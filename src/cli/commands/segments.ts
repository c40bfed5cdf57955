import {
  renameSegmentInput,
  type ApiInput,
  type RegroupResult,
  type RunSegmentation,
  type SegmentationChange,
  type SegmentProfile,
  type SegmentsResult,
} from '../../api/contract.js';
import { onGroupRun, runGroup, type CliApi } from '../api-client.js';
import type { CliIo } from '../run-command.js';
import { describeQueueCounts, segmentationWords } from '../segment-words.js';
import type { RegisterCommand } from '../run-command.js';
import { addSchemaOptions, componentGroups, inputFromFlags, numberOrText, schemaOptions } from '../schema-options.js';

const percent = (share: number) => `${(share * 100).toFixed(1)}%`;

function describeSegment(segment: SegmentProfile): string {
  const medians = segment.profile
    .slice(0, 4)
    .map((quartiles) => `${quartiles.feature} ${quartiles.median.toFixed(2)}${quartiles.unit ? ` ${quartiles.unit}` : ''}`)
    .join(', ');
  const components = `component${segment.components.length > 1 ? 's' : ''} ${segment.components.join(', ')}`;
  return (
    `  ${segment.segment}  ${segment.key}  ${segment.name}${segment.renamed ? ` (default: ${segment.defaultName})` : ''}: ` +
    `${segment.customers} customers (${percent(segment.share)}), ${percent(segment.revenueShare)} of revenue; ${components}; medians ${medians}`
  );
}

function describeTree(value: RunSegmentation): string {
  return [
    `Run ${value.runId}: ${value.components} ${value.covariance} components combined into ${value.segmentCount} segments (${segmentationWords[value.method]}); ` +
      `auto chooses ${value.autoSegmentCount} (${value.autoSegmentCountByMergedRows} on the normalised curve)`,
    ...value.segments.map((segment) => `  ${segment.segment}  ${segment.key}  ${segment.name}: components ${segment.components.join(', ')}; ${segment.customers} customers`),
    'combining levels (segments, entropy, customers moved by the merge, groups of components):',
    ...value.levels.map(
      (level) =>
        `  ${String(level.segmentCount).padStart(2)}  ${level.entropy.toFixed(1).padStart(10)}  ${String(level.mergedRows).padStart(7)}  ` +
        `${level.groups.map((group) => `{${group.join(',')}}`).join(' ')}${level.segmentCount === value.currentLevel ? '  ← now' : ''}`,
    ),
  ].join('\n');
}

function describeRegroup(value: RegroupResult): string {
  const { summary } = value;
  return [
    `Run ${summary.runId}: ${value.change}; now ${summary.segmentCount} segment${summary.segmentCount === 1 ? '' : 's'}, ${summary.borderline} borderline, ` +
      `review ${describeQueueCounts(summary.review)}`,
    ...summary.segments.map(
      (segment) => `  ${segment.key}  ${segment.name}: ${segment.customers} customers (${percent(segment.share)}), components ${segment.components.join(', ')}`,
    ),
    ...(value.retired.length > 0 ? [`  no longer a segment: ${value.retired.join('; ')}`] : []),
    ...(value.added.length > 0 ? [`  new: ${value.added.join('; ')}`] : []),
    ...(value.returned.length > 0 ? [`  back with their earlier key and name: ${value.returned.join('; ')}`] : []),
    ...(value.laterRunsUpdated.length > 0 ? [`  movement of later run${value.laterRunsUpdated.length > 1 ? 's' : ''} ${value.laterRunsUpdated.join(', ')} worked out again`] : []),
  ].join('\n');
}

const renameFlags = schemaOptions(renameSegmentInput.shape, ['runId']);

/** A segment as the command line names it: an index where it looks like a number, else a key or name. */
const segmentArgument = (raw: string) => numberOrText(raw) as number | string;

async function regroup(api: CliApi, runId: number, change: SegmentationChange, io: CliIo, showProgress: boolean) {
  const result = await api.run(
    'regroupSegments',
    { runId, change } as ApiInput<'regroupSegments'>,
    showProgress ? (progress) => io.stderr(`\r${progress.message}\x1b[K`) : undefined,
  );
  if (showProgress) io.stderr('\n');
  return { result, human: describeRegroup };
}

/**
 * `spendmix segments --db FILE --run ID|latest (list | rename … | tree | level N|auto | merge A B |
 * split S --parts "0,1;2")`: the Segments screen's profiles and rename, and the Model screen's
 * combining of components into segments, through the same API calls.
 */
export const registerSegments: RegisterCommand = (program, io, setExitCode) => {
  const segments = runGroup(
    program,
    'segments',
    "A run's segments (each one or more model components) with their profiles; renaming one; and how the components are combined.",
  );
  const progress = (options: Record<string, unknown>) => !options.json && !segments.opts().json && process.stderr.isTTY;

  segments
    .command('list')
    .description('List the segments, highest spend first: index, key, name, size, revenue share, components and feature medians.')
    .option('--json', 'print one JSON object {runId, features, segments, components}')
    .action(
      onGroupRun(segments, io, setExitCode, async (api, runId) => ({
        result: await api.call('segments', { runId }),
        human: (value: SegmentsResult) => [`Run ${value.runId}: ${value.segments.length} segments`, ...value.segments.map(describeSegment)].join('\n'),
      })),
    );

  addSchemaOptions(segments.command('rename').description('Rename a segment of the run (by index, key or current name).'), renameFlags)
    .option('--json', 'print the renamed segment as one JSON object')
    .action(
      onGroupRun(segments, io, setExitCode, async (api, runId, options) => ({
        result: await api.call('renameSegment', { ...inputFromFlags(renameFlags, options), runId } as ApiInput<'renameSegment'>),
        human: (value: SegmentProfile) => `Renamed:\n${describeSegment(value)}`,
      })),
    );

  segments
    .command('tree')
    .description('How the components are combined: the segments now and every level of the combining hierarchy with its entropy.')
    .option('--json', 'print one JSON object {runId, components, covariance, method, segmentCount, autoSegmentCount, segments, levels, currentLevel}')
    .action(
      onGroupRun(segments, io, setExitCode, async (api, runId) => ({ result: await api.call('segmentation', { runId }), human: describeTree })),
    );

  segments
    .command('level <count>')
    .description('Combine the components into this many segments (a level of the hierarchy), or auto: merged while customers are unsure between the two, where the entropy curve flattens.')
    .option('--json', 'print one JSON object {summary, change, keptKeys, retired, added, returned, laterRunsUpdated}')
    .action((count: string, options: Record<string, unknown>) =>
      onGroupRun(segments, io, setExitCode, (api, runId) =>
        regroup(api, runId, { level: (count.trim() === 'auto' ? 'auto' : numberOrText(count)) as number | 'auto' }, io, progress(options)),
      )(options),
    );

  segments
    .command('merge <a> <b>')
    .description('Merge two segments (index, key or name) into one.')
    .option('--json', 'print one JSON object {summary, change, keptKeys, retired, added, returned, laterRunsUpdated}')
    .action((a: string, b: string, options: Record<string, unknown>) =>
      onGroupRun(segments, io, setExitCode, (api, runId) => regroup(api, runId, { merge: [segmentArgument(a), segmentArgument(b)] }, io, progress(options)))(options),
    );

  segments
    .command('split <segment>')
    .description('Split a segment (index, key or name) back into groups of its components.')
    .requiredOption('--parts <groups>', 'groups of the segment\'s component indices separated by ";", e.g. "0,3;5"')
    .option('--json', 'print one JSON object {summary, change, keptKeys, retired, added, returned, laterRunsUpdated}')
    .action((segment: string, options: Record<string, unknown>) =>
      onGroupRun(segments, io, setExitCode, (api, runId) =>
        regroup(
          api,
          runId,
          { split: { segment: segmentArgument(segment), parts: componentGroups(String(options.parts)) as number[][] } },
          io,
          progress(options),
        ),
      )(options),
    );
};
