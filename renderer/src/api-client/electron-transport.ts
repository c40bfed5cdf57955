import type { CallOutcome, SpendmixBridge } from '../../../src/api/contract.js';
import { ApiCallError } from './api-call-error.js';
import type { Transport } from './build-client.js';

/** The transport inside the desktop app: the preload's `window.spendmix` bridge. */
export function electronTransport(bridge: SpendmixBridge): Transport {
  const unwrap = async <T>(answer: Promise<CallOutcome<T>>): Promise<T> => {
    const outcome = await answer;
    if (!outcome.ok) throw new ApiCallError(outcome.error);
    return outcome.value;
  };
  return {
    call: (method, input) => bridge.call(method, input),
    subscribe: (listener) => bridge.onTaskEvent(listener),
    shell: {
      kind: 'electron',
      chooseOpenFile: (options) => unwrap(bridge.chooseOpenFile(options)),
      chooseSavePath: (options) => unwrap(bridge.chooseSavePath(options)),
      pathForFile: async (file) => {
        const path = bridge.pathForFile(file);
        if (!path) throw new ApiCallError({ kind: 'input', message: `"${file.name}" has no path on disk; save it to a folder first.` });
        return path;
      },
      // The export is already at the path the user chose in the save dialog.
      deliverExport: async () => undefined,
      onMenuCommand: (listener) => bridge.onMenuCommand(listener),
    },
  };
}
