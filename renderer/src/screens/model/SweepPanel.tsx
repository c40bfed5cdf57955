/*
 * The Model screen's model choice: the information criterion over k per covariance structure,
 * and every fit of the sweep in a table, refused fits marked with their reason. Test ids:
 * model-criterion-chart, model-sweep-caption, model-sweep-refused, model-sweep-table,
 * sweep-row-<k>-<structure> (class is-refused / is-chosen).
 */
import { useMemo } from 'react';
import type { SelectionCriterion, SweepRow } from '../../../../src/api/contract.js';
import { useApi, useFormat, useLoad } from '../../app/client-context.js';
import { bestRow, criterionOption, structureLabels, sweepOrder } from '../../charts/model-charts.js';
import { Chart } from '../../components/Chart.js';
import { ErrorNote, Loading } from '../../components/Notice.js';
import { pagesFromArray, VirtualTable, type Column } from '../../components/VirtualTable.js';

const fitName = (row: SweepRow) => `k = ${row.k}, ${structureLabels[row.covariance]}`;

export function SweepPanel({ runId, criterion }: { runId: number | null; criterion: SelectionCriterion }) {
  const api = useApi();
  const format = useFormat();
  const sweep = useLoad(runId === null ? null : () => api.sweepTable({ runId }), `sweep:${runId}`);
  const rows = sweep.data ?? [];
  const chart = useMemo(() => (rows.length ? criterionOption(rows, criterion, format) : null), [rows, criterion, format]);
  const ordered = useMemo(() => sweepOrder(rows, criterion), [rows, criterion]);
  const fetchRows = useMemo(() => pagesFromArray(ordered), [ordered]);
  const best = bestRow(rows, criterion);
  const lowest = bestRow(rows, criterion, { includeRefused: true });
  const chosen = rows.find((row) => row.chosen) ?? null;
  const refused = rows.filter((row) => row.refused !== null);
  const label = criterion.toUpperCase();

  const columns: Column<SweepRow>[] = [
    { key: 'k', header: 'k', width: '2.5rem', align: 'right', render: (row) => row.k },
    { key: 'structure', header: 'structure', width: '7.5rem', render: (row) => structureLabels[row.covariance] },
    { key: 'criterion', header: `${label}`, width: '7rem', align: 'right', render: (row) => format.decimal(row[criterion], 1) },
    { key: 'll', header: 'log-likelihood', width: '8rem', align: 'right', render: (row) => format.decimal(row.logLikelihood, 1) },
    { key: 'p', header: 'parameters', width: '6rem', align: 'right', render: (row) => format.count(row.parameterCount) },
    { key: 'iterations', header: 'iterations', width: '6.5rem', align: 'right', render: (row) => `${format.count(row.iterations)}${row.converged ? '' : ' (stopped)'}` },
    {
      key: 'status',
      header: 'status',
      width: 'minmax(16rem, 1fr)',
      render: (row) =>
        row.refused !== null ? (
          <span className="sweep-refused" title={row.refused}>
            <span aria-hidden="true">✕ </span>refused: {row.refused}
          </span>
        ) : row.chosen ? (
          <strong>chosen</strong>
        ) : row.warnings.length ? (
          <span className="quiet" title={row.warnings.join('\n')}>{row.warnings.join('; ')}</span>
        ) : (
          <span className="quiet">{row.converged ? 'valid' : 'valid, stopped at the iteration limit'}</span>
        ),
    },
  ];

  return (
    <>
      <div className="panel">
        <h2>Information criterion over k</h2>
        {sweep.error ? <ErrorNote error={sweep.error} onRetry={sweep.reload} /> : null}
        {chart ? (
          <>
            <Chart option={chart} label="Information criterion by number of components for each covariance structure; refused fits drawn as crosses" height={340} testId="model-criterion-chart" />
            <p className="caption" data-testid="model-sweep-caption">
              Run #{runId}, {label}: lower is better. {chosen ? `Chosen: ${fitName(chosen)} (ringed).` : ''}
              {best && chosen && best !== chosen ? ` The lowest valid value is at ${fitName(best)}.` : ''}
            </p>
            {refused.length ? (
              <p className="caption caption-warn" data-testid="model-sweep-refused">
                ✕ {format.count(refused.length)} of {format.count(rows.length)} fits refused and never chosen: a component too small to estimate its
                own covariance, or held up only by the regularisation floor (hover a cross, or see the table, for each reason).
                {lowest && lowest.refused !== null ? ` The lowest ${label} overall, at ${fitName(lowest)}, is one of them.` : ''}
              </p>
            ) : null}
          </>
        ) : sweep.loading ? (
          <Loading what="the sweep" />
        ) : (
          <p className="quiet">{runId === null ? 'Fit a run to see the criterion for each k and structure.' : 'This run used a fixed k and structure, so there is no sweep to show.'}</p>
        )}
      </div>
      {ordered.length ? (
        <div className="panel">
          <div className="panel-head">
            <h2>Every fit of the sweep</h2>
            <span className="quiet">best {label} first</span>
          </div>
          <VirtualTable
            columns={columns}
            total={ordered.length}
            fetchPage={fetchRows}
            testId="model-sweep-table"
            label="Fits of the model sweep"
            rowTestId={(row) => `sweep-row-${row.k}-${row.covariance}`}
            rowClassName={(row) => (row.refused !== null ? 'is-refused' : row.chosen ? 'is-chosen' : '')}
            height={300}
          />
        </div>
      ) : null}
    </>
  );
}
