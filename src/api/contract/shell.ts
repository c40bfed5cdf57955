import type { ApiMethod, Api, LongTaskMethod, TaskResults } from './methods.js';
import type { ApiError, TaskEvent, TaskProgress, TaskStarted } from './tasks.js';
import type { ExportResult } from './export.js';

/** Commands the application menu sends to the screens. */
export type MenuCommand =
  | { command: 'database-opened'; path: string }
  | { command: 'import-file'; path: string }
  | { command: 'export' }
  /** The user accepted the first-start offer; the demo is loading as this task. */
  | { command: 'demo-started'; taskId: string };

export interface SpendmixShell {
  kind: 'electron' | 'browser';
  /** Native open dialog (Electron); null where there is none or the user cancelled. */
  chooseOpenFile(options: { title: string; extensions: string[] }): Promise<string | null>;
  /** Native save dialog (Electron); null where there is none or the user cancelled. */
  chooseSavePath(options: { title: string; defaultName: string; extensions: string[] }): Promise<string | null>;
  /**
   * Turns a File the user dropped or chose into a path the core can read: its own path in
   * Electron, an upload into the host's session folder in the browser.
   */
  pathForFile(file: File): Promise<string>;
  /**
   * Hands a finished export (a workbook, a list, a scoring query) to the user. Electron: nothing
   * to do, the file is where the user chose. Browser: the host wrote it into its session folder;
   * this downloads it (served once).
   */
  deliverExport(result: Pick<ExportResult, 'out'>): Promise<void>;
  onMenuCommand(listener: (command: MenuCommand) => void): () => void;
}

/** One call's answer over a transport: the value, or the error with its fields intact. */
export type CallOutcome<T = unknown> = { ok: true; value: T } | { ok: false; error: ApiError };

/**
 * What the Electron preload exposes as `window.spendmix` (contextBridge): the task-shaped API
 * and the shell's dialogs, nothing else. `call` only reaches methods of `apiSchemas`; the main
 * process validates every input with their zod schemas and checks the sending frame.
 */
export interface SpendmixBridge {
  call(method: ApiMethod, input: unknown): Promise<CallOutcome>;
  onTaskEvent(listener: (event: TaskEvent) => void): () => void;
  chooseOpenFile(options: { title: string; extensions: string[] }): Promise<CallOutcome<string | null>>;
  chooseSavePath(options: { title: string; defaultName: string; extensions: string[] }): Promise<CallOutcome<string | null>>;
  /** webUtils.getPathForFile: the dropped file's path on disk ('' when it has none). */
  pathForFile(file: File): string;
  onMenuCommand(listener: (command: MenuCommand) => void): () => void;
}

/**
 * The browser host's HTTP surface (DESIGN.md §12), for the browser client:
 * - `POST /api/<method>` with a JSON body → 200 `CallOutcome` ok, or 400 (input) / 409
 *   (cancelled) / 500 (internal) with `CallOutcome` not ok;
 * - `GET /api/events` → server-sent events, one `TaskEvent` per `data:` line;
 * - `POST /api/upload?name=<file name>` with the file's bytes → `{ path }` in the session folder
 *   (413 above the host's upload limit);
 * - `GET /api/download?path=<ExportResult.out>` → the finished export as an attachment, once.
 * Every `/api/` request carries the session token, as the `x-spendmix-token` header or, where a
 * header cannot be set (EventSource), the `token` query parameter; without it: 401. A request a
 * browser sends from any page but the host's own is refused with 403.
 */
export const tokenHeader = 'x-spendmix-token';
/** The header's name as a type, so the renderer (which may import types only) is checked against it. */
export type TokenHeader = typeof tokenHeader;

/** What `renderer/src/api-client` hands the screens. */
export interface SpendmixClient {
  api: Api;
  shell: SpendmixShell;
  /** Every task event, for progress bars; returns the unsubscribe function. */
  onTaskEvent(listener: (event: TaskEvent) => void): () => void;
  /** Resolves with the task's result, rejects with an Error carrying `ApiError` fields. */
  waitForTask<M extends LongTaskMethod>(
    started: TaskStarted<M>,
    onProgress?: (progress: TaskProgress) => void,
  ): Promise<TaskResults[M]>;
}
