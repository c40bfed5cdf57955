import { createContext, useCallback, useContext, useEffect, useReducer, useRef, useState } from 'react';
import type { Api, ApiError, LongTaskMethod, SpendmixClient, TaskResults, TaskStarted } from '../../../src/api/contract.js';
import type { ApiActivity } from '../lib/api-activity.js';
import { formattersFor, userLocale, type Formatters } from '../lib/format.js';
import { taskReducer, toApiError, type TaskView } from '../lib/task-state.js';

const ClientContext = createContext<SpendmixClient | null>(null);

export const ClientProvider = ClientContext.Provider;

const ActivityContext = createContext<ApiActivity | null>(null);
export const ActivityProvider = ActivityContext.Provider;

/** When the API has gone quiet (see lib/api-activity.ts); at once where nothing tracks it. */
const immediately: ApiActivity['whenQuiet'] = () => Promise.resolve();
export function useWhenQuiet(): ApiActivity['whenQuiet'] {
  return useContext(ActivityContext)?.whenQuiet ?? immediately;
}

export function useClient(): SpendmixClient {
  const client = useContext(ClientContext);
  if (!client) throw new Error('useClient needs a ClientProvider above it.');
  return client;
}

export function useApi(): Api {
  return useClient().api;
}

const formatters = formattersFor(userLocale());
export function useFormat(): Formatters {
  return formatters;
}

export type Loaded<T> = { data: T | null; error: ApiError | null; loading: boolean; reload: () => void };

/**
 * Runs an API read whenever `key` changes and keeps the latest answer; an answer that arrives
 * after a newer request started is dropped, so quick slider moves never show stale counts.
 */
export function useLoad<T>(read: (() => Promise<T>) | null, key: string): Loaded<T> {
  const [state, setState] = useState<{ data: T | null; error: ApiError | null; loading: boolean }>({ data: null, error: null, loading: read !== null });
  const [nonce, setNonce] = useState(0);
  const latest = useRef(0);
  const readRef = useRef(read);
  readRef.current = read;
  useEffect(() => {
    const run = readRef.current;
    if (!run) {
      setState({ data: null, error: null, loading: false });
      return;
    }
    const ticket = ++latest.current;
    setState((current) => ({ ...current, loading: true }));
    run().then(
      (data) => ticket === latest.current && setState({ data, error: null, loading: false }),
      (error: unknown) => ticket === latest.current && setState({ data: null, error: toApiError(error), loading: false }),
    );
  }, [key, nonce]);
  const reload = useCallback(() => setNonce((n) => n + 1), []);
  return { ...state, reload };
}

/** Drives one long task: start, progress, cancel, outcome. */
export function useTask<M extends LongTaskMethod>(onDone?: (result: TaskResults[M]) => void) {
  const client = useClient();
  const [view, dispatch] = useReducer(taskReducer<TaskResults[M]>, { state: 'idle' } as TaskView<TaskResults[M]>);
  const taskId = useRef<string | null>(null);
  const doneRef = useRef(onDone);
  doneRef.current = onDone;

  const start = useCallback(
    (begin: () => Promise<TaskStarted<M>>) => {
      dispatch({ type: 'start' });
      begin()
        .then((started) => {
          taskId.current = started.taskId;
          dispatch({ type: 'started', taskId: started.taskId });
          return client.waitForTask(started, (progress) => dispatch({ type: 'progress', progress }));
        })
        .then(
          (result) => {
            dispatch({ type: 'done', result });
            doneRef.current?.(result);
          },
          (error: unknown) => {
            const apiError = toApiError(error);
            dispatch(apiError.kind === 'cancelled' ? { type: 'cancelled' } : { type: 'failed', error: apiError });
          },
        )
        .finally(() => {
          taskId.current = null;
        });
    },
    [client],
  );

  const cancel = useCallback(() => {
    if (!taskId.current) return;
    dispatch({ type: 'cancel-requested' });
    client.api.cancelTask({ taskId: taskId.current }).catch(() => undefined);
  }, [client]);

  const dismiss = useCallback(() => dispatch({ type: 'dismiss' }), []);
  return { view, start, cancel, dismiss };
}
