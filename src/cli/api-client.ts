import type { Command } from 'commander';
import { existsSync } from 'node:fs';
import { callApi } from '../api/handlers.js';
import { runLongTask } from '../api/long-tasks.js';
import { ApiSession } from '../api/session.js';
import type { ApiInput, ApiMethod, ApiOutput, LongTaskMethod, TaskProgress, TaskResults, TaskStarted } from '../api/contract.js';
import { InputError } from '../errors.js';
import { runCommand, type CliIo, type CommandOutcome } from './run-command.js';
import { numberOrText } from './schema-options.js';

/**
 * The command line as a client of the API (DESIGN.md §2): every app action a command makes is an
 * API call on a session of its own (shell 'cli'), through the same handlers and validation as the
 * screens. Long tasks run on this thread (no worker to start for one command), through the same
 * task function the app's worker runs; their progress events give the progress lines.
 */
export interface CliApi {
  call<M extends ApiMethod>(method: M, input: ApiInput<M>): Promise<ApiOutput<M>>;
  /** Starts a long task and waits for its result, reporting progress on the way. */
  run<M extends LongTaskMethod>(method: M, input: ApiInput<M>, onProgress?: (progress: TaskProgress) => void): Promise<TaskResults[M]>;
  /** The run id a `--run` value names: an id, or "latest" for the newest run. */
  runId(raw: string | undefined, command: string): Promise<number>;
}

/** A missing database file is bad input for the commands that read one (no new database is created). */
export function requireExistingDatabase(path: string | undefined, command: string): string {
  if (!path) throw new InputError(`${command} needs --db FILE: the Spendmix database.`);
  if (!existsSync(path)) throw new InputError(`Database ${path} does not exist; create it with "import" or "demo --db" first.`);
  return path;
}

/** Opens a session on the database, runs `work` with the API, and closes the session. */
export async function withApi<T>(dbPath: string, work: (api: CliApi) => Promise<T>): Promise<T> {
  const session = new ApiSession({ dbPath, shell: 'cli', runLongTask });
  const api: CliApi = {
    call: (method, input) => callApi(session, method, input) as never,
    async run(method, input, onProgress) {
      const started = (await callApi(session, method, input)) as TaskStarted<typeof method>;
      const unsubscribe = onProgress
        ? session.tasks.onEvent((event) => {
            if (event.type === 'progress' && event.taskId === started.taskId) onProgress(event);
          })
        : () => undefined;
      try {
        return await session.tasks.wait(started);
      } finally {
        unsubscribe();
      }
    },
    async runId(raw, command) {
      if (raw === undefined) throw new InputError(`${command} needs --run ID (or --run latest).`);
      // An id is handed to the API as typed (a number where it looks like one), so a bad one is refused in the API's words.
      if (raw.trim() !== 'latest') return numberOrText(raw) as number;
      const runs = await api.call('listRuns', {});
      if (runs.length === 0) throw new InputError('The database has no runs yet; run refresh first.');
      return runs[0].runId;
    },
  };
  try {
    return await work(api);
  } finally {
    await session.close();
  }
}

/** A command over one run of a database (`review`, `segments`): `--db` and `--run` on the group, the work in its subcommands. */
export function runGroup(program: Command, name: string, description: string): Command {
  return program.command(name).description(description).option('--db <file>', 'the Spendmix database').option('--run <id>', 'run id, or latest');
}

/**
 * A subcommand's action in a run group: one API session on the group's database with its run
 * id resolved ("latest" included), the CLI's output conventions around it.
 */
export function onGroupRun<T>(
  group: Command,
  io: CliIo,
  setExitCode: (code: number) => void,
  work: (api: CliApi, runId: number, options: Record<string, unknown>) => Promise<CommandOutcome<T>>,
): (options: Record<string, unknown>) => Promise<void> {
  return async (options) => {
    const parent = group.opts<{ db?: string; run?: string; json?: boolean }>();
    const json = Boolean(options.json || parent.json);
    setExitCode(
      await runCommand(io, json, async () => {
        const db = requireExistingDatabase(parent.db, group.name());
        return withApi(db, async (api) => work(api, await api.runId(parent.run, group.name()), options));
      }),
    );
  };
}
