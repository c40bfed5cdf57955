import { renameSegmentInput, type SegmentProfile, type SegmentsResult } from '../../api/contract.js';
import { requireExistingDatabase, withApi } from '../api-client.js';
import { runCommand, type RegisterCommand } from '../run-command.js';
import { addSchemaOptions, inputFromFlags, schemaOptions } from '../schema-options.js';

interface SegmentsCliOptions {
  db?: string;
  run?: string;
  json?: boolean;
}

const percent = (share: number) => `${(share * 100).toFixed(1)}%`;

function describeSegment(segment: SegmentProfile): string {
  const medians = segment.profile
    .slice(0, 4)
    .map((quartiles) => `${quartiles.feature} ${quartiles.median.toFixed(2)}${quartiles.unit ? ` ${quartiles.unit}` : ''}`)
    .join(', ');
  return `  ${segment.segment}  ${segment.key}  ${segment.name}: ${segment.customers} customers (${percent(segment.share)}), ${percent(segment.revenueShare)} of revenue; medians ${medians}`;
}

const renameFlags = schemaOptions(renameSegmentInput.shape, ['runId']);

/**
 * `spendmix segments --db FILE --run ID|latest (list | rename --segment S --name NAME)`: the
 * Segments screen's profiles and its rename, through the same API calls.
 */
export const registerSegments: RegisterCommand = (program, io, setExitCode) => {
  const segments = program
    .command('segments')
    .description("A run's segments in spend order with their profiles, and renaming one (names carry over to next month).")
    .option('--db <file>', 'the Spendmix database')
    .option('--run <id>', 'run id, or latest');

  segments
    .command('list')
    .description('List the segments, highest spend first: index, key, name, size, revenue share and feature medians.')
    .option('--json', 'print one JSON object {runId, features, segments}')
    .action(async (options: { json?: boolean }) => {
      const parent = segments.opts<SegmentsCliOptions>();
      const json = Boolean(options.json || parent.json);
      setExitCode(
        await runCommand(io, json, async () => {
          const db = requireExistingDatabase(parent.db, 'segments');
          const result = await withApi(db, async (api) => api.call('segments', { runId: await api.runId(parent.run, 'segments') }));
          return { result, human: (value: SegmentsResult) => [`Run ${value.runId}: ${value.segments.length} segments`, ...value.segments.map(describeSegment)].join('\n') };
        }),
      );
    });

  addSchemaOptions(segments.command('rename').description('Rename a segment of the run (by index, key or current name).'), renameFlags)
    .option('--json', 'print the renamed segment as one JSON object')
    .action(async (options: Record<string, unknown>) => {
      const parent = segments.opts<SegmentsCliOptions>();
      const json = Boolean(options.json || parent.json);
      setExitCode(
        await runCommand(io, json, async () => {
          const db = requireExistingDatabase(parent.db, 'segments');
          const result = await withApi(db, async (api) =>
            api.call('renameSegment', { ...inputFromFlags(renameFlags, options), runId: await api.runId(parent.run, 'segments') } as never),
          );
          return { result, human: (value: SegmentProfile) => `Renamed:\n${describeSegment(value)}` };
        }),
      );
    });
};
