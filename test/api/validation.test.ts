import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { apiSchemas, type ApiMethod, type CallOutcome } from '../../src/api/contract.js';
import { callApiOutcome } from '../../src/api/handlers.js';
import { startHost, type RunningHost } from '../../src/api/http-host.js';
import { ApiSession } from '../../src/api/session.js';
import { registerIpc } from '../../main/electron/ipc.js';
import { channels } from '../../main/electron/channels.js';

vi.mock('electron', () => ({}));

/**
 * For every API method, one malformed input and the field its error must name. Typed as a
 * Record over the methods, so a method added to the contract fails to compile here until it
 * has its case.
 */
const malformed: Record<ApiMethod, { input: unknown; field: string }> = {
  appInfo: { input: { verbose: true }, field: '(input)' },
  openDatabase: { input: { path: 42 }, field: 'path' },
  databaseInfo: { input: { extra: 1 }, field: '(input)' },
  previewFile: { input: { path: 'a.csv', kind: 'receipts', rows: 0 }, field: 'rows' },
  importFile: { input: { path: 'a.csv', kind: 'sales' }, field: 'kind' },
  listImports: { input: { limit: 5 }, field: '(input)' },
  importReport: { input: { importId: -1 }, field: 'importId' },
  savedMapping: { input: {}, field: 'kind' },
  modelOptions: { input: { k: 3 }, field: '(input)' },
  startRun: { input: { asOf: '30/11/2026' }, field: 'asOf' },
  listRuns: { input: { all: true }, field: '(input)' },
  runSummary: { input: { runId: 'latest' }, field: 'runId' },
  segments: { input: { runId: 0 }, field: 'runId' },
  segmentation: { input: { runId: -2 }, field: 'runId' },
  regroupSegments: { input: { runId: 1, change: { merge: [0] } }, field: 'change' },
  acceptUnqueued: { input: { runId: 1, reviewer: 'a\u0007b' }, field: 'reviewer' },
  sweepTable: { input: {}, field: 'runId' },
  segmentSample: { input: { runId: 1, limit: 0 }, field: 'limit' },
  featureDistribution: { input: { runId: 1, feature: '' }, field: 'feature' },
  membershipsPage: { input: { runId: 1, sortBy: 'shoe size' }, field: 'sortBy' },
  certainty: { input: { runId: 1, borderlineConfidence: 1.5, borderlineMargin: 0.2, atypicalPercentile: 1 }, field: 'borderlineConfidence' },
  borderline: { input: { runId: 1, limit: 5000 }, field: 'limit' },
  reviewQueue: { input: { runId: 1, status: 'pending' }, field: 'status' },
  decideReview: { input: { runId: 1, customerId: 'C1', action: 'move' }, field: 'segment' },
  renameSegment: { input: { runId: 1, segment: 0, name: '   ' }, field: 'name' },
  movement: { input: { runId: 1.5 }, field: 'runId' },
  exportRun: { input: { runId: 1, out: 'x.xlsx', minConfidence: 2 }, field: 'minConfidence' },
  loadDemo: { input: { customers: 0 }, field: 'customers' },
  featuresSql: { input: { asOf: '2026-11-30', windowMonths: 61 }, field: 'windowMonths' },
  modelSql: { input: { runId: 1, dialect: 'oracle' }, field: 'dialect' },
  cancelTask: { input: { taskId: '' }, field: 'taskId' },
  taskStatus: { input: {}, field: 'taskId' },
};

function expectFieldError(outcome: CallOutcome, method: string, field: string, input: unknown): void {
  expect(outcome.ok, `${method} accepted malformed input`).toBe(false);
  if (outcome.ok) return;
  expect(outcome.error.kind).toBe('input');
  expect(outcome.error.message).toContain(`${method}: invalid input`);
  // A field of the input is named by its path; an unknown field of the whole input by its own name.
  expect(outcome.error.message).toContain(field === '(input)' ? `unknown field "${Object.keys(input as object)[0]}"` : field);
  expect(outcome.error.issues?.map((issue) => issue.path)).toContain(field);
}

describe('every handler rejects malformed input with a clear error naming the field', () => {
  let folder: string;
  let session: ApiSession;
  let host: RunningHost;
  let ipcCall: (method: unknown, input: unknown) => Promise<CallOutcome>;

  beforeAll(async () => {
    folder = mkdtempSync(join(tmpdir(), 'spendmix-validation-'));
    const rendererDir = join(folder, 'renderer');
    mkdirSync(rendererDir);
    writeFileSync(join(rendererDir, 'index.html'), '<!doctype html><div id="root"></div>');
    session = new ApiSession({ dbPath: join(folder, 'validation.db'), shell: 'browser' });
    host = await startHost({ session, rendererDir });

    // IPC through the real wiring, with Electron's ipcMain and one window played by plain objects.
    const handlers = new Map<string, (event: unknown, ...args: unknown[]) => Promise<CallOutcome>>();
    const webContents = { send: vi.fn() };
    const window = { webContents, isDestroyed: () => false };
    registerIpc({
      ipcMain: { handle: (channel: string, handler: never) => handlers.set(channel, handler), removeHandler: vi.fn() } as never,
      session,
      windows: () => [window as never],
      dialog: { showOpenDialog: vi.fn(), showSaveDialog: vi.fn() },
    });
    const event = { sender: webContents, senderFrame: { url: 'spendmix://app/index.html', parent: null } };
    ipcCall = (method, input) => handlers.get(channels.call)!(event, method, input);
  });

  afterAll(async () => {
    await host.close();
    await session.close();
  });

  it('covers every method of the contract', () => {
    expect(Object.keys(malformed).sort()).toEqual(Object.keys(apiSchemas).sort());
  });

  for (const [method, { input, field }] of Object.entries(malformed)) {
    it(`${method}: in process, over IPC and over HTTP`, async () => {
      expectFieldError(await callApiOutcome(session, method, input), method, field, input);
      expectFieldError(await ipcCall(method, input), method, field, input);
      const response = await fetch(`http://127.0.0.1:${host.port}/api/${method}`, {
        method: 'POST',
        headers: { 'content-type': 'application/json', 'x-spendmix-token': host.token },
        body: JSON.stringify(input),
      });
      expect(response.status).toBe(400);
      expectFieldError((await response.json()) as CallOutcome, method, field, input);
    });
  }

  it('names unknown methods and lists the known ones, over both transports', async () => {
    const viaIpc = await ipcCall('dropEverything', {});
    expect(viaIpc.ok).toBe(false);
    if (!viaIpc.ok) expect(viaIpc.error.message).toMatch(/Unknown API method "dropEverything".*startRun/);
    const viaIpcNotString = await ipcCall({ toString: 1 }, {});
    expect(viaIpcNotString.ok).toBe(false);
    const response = await fetch(`http://127.0.0.1:${host.port}/api/dropEverything`, {
      method: 'POST',
      headers: { 'x-spendmix-token': host.token },
      body: '{}',
    });
    expect(response.status).toBe(400);
  });

  it('reports a missing file or run as bad input, not as an internal failure', async () => {
    const missingFile = await callApiOutcome(session, 'importFile', { path: join(folder, 'nowhere.csv'), kind: 'receipts' });
    // The browser shell reads only files uploaded into its session (file-policy.ts).
    expect(missingFile.ok === false && missingFile.error).toMatchObject({ kind: 'input', message: expect.stringMatching(/was not uploaded in this session/) });
    const missingRun = await callApiOutcome(session, 'segments', { runId: 99 });
    expect(missingRun.ok === false && missingRun.error.kind).toBe('input');
    const missingTask = await callApiOutcome(session, 'taskStatus', { taskId: 'no-such-task' });
    expect(missingTask.ok === false && missingTask.error).toMatchObject({ kind: 'input', message: expect.stringMatching(/No task/) });
  });
});
