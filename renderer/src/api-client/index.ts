import type { SpendmixBridge, SpendmixClient } from '../../../src/api/contract.js';
import { buildClient } from './build-client.js';
import { electronTransport } from './electron-transport.js';
import { httpTransport, takeSessionToken } from './http-transport.js';

export { ApiCallError } from './api-call-error.js';

/**
 * The screens' one way to the core, whatever hosts them: the preload's `window.spendmix` in the
 * desktop app, HTTP and server-sent events to the local host in a browser. Both give the same
 * `SpendmixClient`, so no screen knows which transport it runs on.
 */
export async function createClient(): Promise<SpendmixClient> {
  const bridge = (window as unknown as { spendmix?: SpendmixBridge }).spendmix;
  if (bridge) return buildClient(electronTransport(bridge));
  const token = takeSessionToken();
  if (!token) {
    throw new Error('This page was opened without its session token. Open the address that `spendmix serve` printed (it ends in ?token=…).');
  }
  return buildClient(httpTransport(token));
}
