import type { z } from 'zod';
import { borderlineInput, certaintyInput, type BorderlinePage, type CertaintySummary } from './certainty.js';
import { appInfoInput, databaseInfoInput, openDatabaseInput, type AppInfo, type DatabaseInfo } from './database.js';
import { exportRunInput, loadDemoInput, type DemoResult, type ExportResult } from './export.js';
import type { MovementResult } from './movement.js';
import {
  acceptUnqueuedInput,
  decideReviewInput,
  renameSegmentInput,
  reviewQueueInput,
  type AcceptUnqueuedResult,
  type ReviewItem,
  type ReviewQueuePage,
} from './review.js';
import { listRunsInput, modelOptionsInput, runInput, type ModelOptions, type RunDetail, type RunListItem, type RunSummary, type SweepRow } from './runs.js';
import {
  featureDistributionInput,
  membershipsPageInput,
  regroupSegmentsInput,
  segmentSampleInput,
  type FeatureDistribution,
  type MembershipsPage,
  type RegroupResult,
  type RunSegmentation,
  type SegmentProfile,
  type SegmentSample,
  type SegmentsResult,
} from './segments.js';
import { startRunInput } from './settings.js';
import {
  importFileInput,
  importReportInput,
  listImportsInput,
  previewFileInput,
  savedMappingInput,
  type FilePreview,
  type ImportRecord,
  type ImportReportPage,
  type ImportResult,
  type SavedMapping,
} from './sources.js';
import { taskInput, type CancelResult, type TaskStarted, type TaskStatus } from './tasks.js';
import { featuresSqlInput, modelSqlInput, type FeaturesSqlResult, type ModelSqlResult } from './warehouse.js';

/** The method table: name → input schema. Output types are in `ApiOutputs`. */
export const apiSchemas = {
  appInfo: appInfoInput,
  openDatabase: openDatabaseInput,
  databaseInfo: databaseInfoInput,
  previewFile: previewFileInput,
  importFile: importFileInput,
  listImports: listImportsInput,
  importReport: importReportInput,
  savedMapping: savedMappingInput,
  modelOptions: modelOptionsInput,
  startRun: startRunInput,
  listRuns: listRunsInput,
  runSummary: runInput,
  segments: runInput,
  segmentation: runInput,
  regroupSegments: regroupSegmentsInput,
  sweepTable: runInput,
  segmentSample: segmentSampleInput,
  featureDistribution: featureDistributionInput,
  membershipsPage: membershipsPageInput,
  certainty: certaintyInput,
  borderline: borderlineInput,
  reviewQueue: reviewQueueInput,
  decideReview: decideReviewInput,
  acceptUnqueued: acceptUnqueuedInput,
  renameSegment: renameSegmentInput,
  movement: runInput,
  exportRun: exportRunInput,
  loadDemo: loadDemoInput,
  featuresSql: featuresSqlInput,
  modelSql: modelSqlInput,
  cancelTask: taskInput,
  taskStatus: taskInput,
} as const;

export type ApiMethod = keyof typeof apiSchemas;

/** The long tasks and what their `done` event carries. */
export interface TaskResults {
  importFile: ImportResult;
  startRun: RunSummary;
  regroupSegments: RegroupResult;
  exportRun: ExportResult;
  loadDemo: DemoResult;
}
export type LongTaskMethod = keyof TaskResults;
export const longTaskMethods: readonly LongTaskMethod[] = ['importFile', 'startRun', 'regroupSegments', 'exportRun', 'loadDemo'];

export interface ApiOutputs {
  appInfo: AppInfo;
  openDatabase: DatabaseInfo;
  databaseInfo: DatabaseInfo;
  previewFile: FilePreview;
  importFile: TaskStarted<'importFile'>;
  listImports: ImportRecord[];
  importReport: ImportReportPage;
  savedMapping: SavedMapping;
  modelOptions: ModelOptions;
  startRun: TaskStarted<'startRun'>;
  listRuns: RunListItem[];
  runSummary: RunDetail;
  segments: SegmentsResult;
  segmentation: RunSegmentation;
  regroupSegments: TaskStarted<'regroupSegments'>;
  sweepTable: SweepRow[];
  segmentSample: SegmentSample;
  featureDistribution: FeatureDistribution;
  membershipsPage: MembershipsPage;
  certainty: CertaintySummary;
  borderline: BorderlinePage;
  reviewQueue: ReviewQueuePage;
  decideReview: ReviewItem;
  acceptUnqueued: AcceptUnqueuedResult;
  renameSegment: SegmentProfile;
  movement: MovementResult;
  exportRun: TaskStarted<'exportRun'>;
  loadDemo: TaskStarted<'loadDemo'>;
  featuresSql: FeaturesSqlResult;
  modelSql: ModelSqlResult;
  cancelTask: CancelResult;
  taskStatus: TaskStatus;
}

/** What the caller sends: the schema's input side (defaults may be left out). */
export type ApiInput<M extends ApiMethod> = z.input<(typeof apiSchemas)[M]>;
/** What a handler receives after validation (defaults filled in). */
export type ApiParsedInput<M extends ApiMethod> = z.output<(typeof apiSchemas)[M]>;
export type ApiOutput<M extends ApiMethod> = ApiOutputs[M];

/** The API as the screens see it, whatever the transport. */
export type Api = { [M in ApiMethod]: (input: ApiInput<M>) => Promise<ApiOutput<M>> };
