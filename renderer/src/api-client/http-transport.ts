import type { ApiError, CallOutcome, TaskEvent, TokenHeader } from '../../../src/api/contract.js';
import { ApiCallError } from './api-call-error.js';
import type { Transport } from './build-client.js';

const TOKEN_STORAGE_KEY = 'spendmix.session-token';
// Typed by the contract, so a renamed header fails the type check here.
const tokenHeader: TokenHeader = 'x-spendmix-token';

/**
 * The session token: from the address the host printed (`?token=…`), kept in this tab's session
 * storage so a reload still works, and taken out of the address bar so it is not shared by a
 * copied link or kept in history.
 */
export function takeSessionToken(): string | null {
  const url = new URL(window.location.href);
  const fromUrl = url.searchParams.get('token');
  if (fromUrl) {
    window.sessionStorage.setItem(TOKEN_STORAGE_KEY, fromUrl);
    url.searchParams.delete('token');
    window.history.replaceState(window.history.state, '', url.pathname + url.search + url.hash);
    return fromUrl;
  }
  return window.sessionStorage.getItem(TOKEN_STORAGE_KEY);
}

async function readOutcome<T>(response: Response): Promise<CallOutcome<T>> {
  try {
    return (await response.json()) as CallOutcome<T>;
  } catch {
    const error: ApiError = { kind: 'internal', message: `The host answered ${response.status} ${response.statusText} without a readable body.` };
    return { ok: false, error };
  }
}

/** The transport in a browser: POST /api/<method>, server-sent events, uploads (see contract.ts). */
export function httpTransport(token: string): Transport {
  const headers = { 'Content-Type': 'application/json', [tokenHeader]: token };
  const call = async (method: string, input: unknown): Promise<CallOutcome> => {
    let response: Response;
    try {
      response = await fetch(`/api/${encodeURIComponent(method)}`, { method: 'POST', headers, body: JSON.stringify(input ?? {}) });
    } catch (error) {
      return { ok: false, error: { kind: 'internal', message: `Cannot reach the Spendmix host: ${(error as Error).message}` } };
    }
    return readOutcome(response);
  };

  const listeners = new Set<(event: TaskEvent) => void>();
  let source: EventSource | null = null;
  const connect = () => {
    // EventSource cannot send headers, so the token goes in the query (the host accepts both).
    source = new EventSource(`/api/events?token=${encodeURIComponent(token)}`);
    source.onmessage = (message) => {
      const event = JSON.parse(message.data as string) as TaskEvent;
      for (const listener of listeners) listener(event);
    };
    // EventSource reconnects by itself after a dropped connection.
  };

  return {
    call,
    subscribe: (listener) => {
      listeners.add(listener);
      if (!source) connect();
      return () => {
        listeners.delete(listener);
      };
    },
    shell: {
      kind: 'browser',
      // A browser has no native dialogs: the screens offer a file input or a path field instead.
      chooseOpenFile: async () => null,
      chooseSavePath: async () => null,
      pathForFile: async (file) => {
        let response: Response;
        try {
          response = await fetch(`/api/upload?name=${encodeURIComponent(file.name)}`, {
            method: 'POST',
            headers: { [tokenHeader]: token, 'Content-Type': 'application/octet-stream' },
            body: file,
          });
        } catch (error) {
          throw new ApiCallError({ kind: 'internal', message: `Uploading ${file.name} failed: ${(error as Error).message}` });
        }
        const outcome = await readOutcome<{ path: string }>(response);
        if (!outcome.ok) throw new ApiCallError(outcome.error);
        return outcome.value.path;
      },
      deliverExport: async ({ out }) => {
        // Fetched with the token in a header (not in an address the browser would keep in its
        // download history), then saved under the export's own file name.
        let response: Response;
        try {
          response = await fetch(`/api/download?path=${encodeURIComponent(out)}`, { headers: { [tokenHeader]: token } });
        } catch (error) {
          throw new ApiCallError({ kind: 'internal', message: `Downloading the export failed: ${(error as Error).message}` });
        }
        if (!response.ok) {
          const outcome = await readOutcome(response);
          throw new ApiCallError(outcome.ok ? { kind: 'internal', message: `The host answered ${response.status}.` } : outcome.error);
        }
        const link = document.createElement('a');
        link.href = URL.createObjectURL(await response.blob());
        link.download = out.split(/[\\/]/).pop() ?? 'spendmix-export';
        document.body.append(link);
        link.click();
        link.remove();
        // The browser has taken its copy once the click has been handled.
        setTimeout(() => URL.revokeObjectURL(link.href), 60_000);
      },
      // The browser has no application menu.
      onMenuCommand: () => () => undefined,
    },
  };
}
