import { renameSegmentInput, type ApiInput, type SegmentProfile, type SegmentsResult } from '../../api/contract.js';
import { onGroupRun, runGroup } from '../api-client.js';
import type { RegisterCommand } from '../run-command.js';
import { addSchemaOptions, inputFromFlags, schemaOptions } from '../schema-options.js';

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
  const segments = runGroup(program, 'segments', "A run's segments in spend order with their profiles, and renaming one (names carry over to next month).");

  segments
    .command('list')
    .description('List the segments, highest spend first: index, key, name, size, revenue share and feature medians.')
    .option('--json', 'print one JSON object {runId, features, segments}')
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
};
