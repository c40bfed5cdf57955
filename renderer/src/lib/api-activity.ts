import type { Api } from '../../../src/api/contract.js';

/**
 * Watches the screens' API calls so that work which can wait (the top bar's table counts) is
 * asked for only once the API has been quiet for a moment: the core answers one call at a time,
 * and a slow count must not sit in front of the calls a screen needs to paint.
 */
export interface ApiActivity {
  api: Api;
  /** Resolves once no call has been in flight for `quietMs`, or after `maxWaitMs` at the latest. */
  whenQuiet(quietMs: number, maxWaitMs: number): Promise<void>;
}

export function trackActivity(api: Api, now: () => number = () => Date.now()): ApiActivity {
  let inFlight = 0;
  let lastActivity = now();
  const tracked = new Proxy(api, {
    get(target, method: string | symbol) {
      const call = Reflect.get(target, method) as unknown;
      if (typeof call !== 'function') return call;
      return (input: unknown) => {
        inFlight += 1;
        lastActivity = now();
        return (call as (input: unknown) => Promise<unknown>).call(target, input).finally(() => {
          inFlight -= 1;
          lastActivity = now();
        });
      };
    },
  });
  const whenQuiet = (quietMs: number, maxWaitMs: number) =>
    new Promise<void>((resolve) => {
      const started = now();
      const check = () => {
        const quietFor = now() - lastActivity;
        if ((inFlight === 0 && quietFor >= quietMs) || now() - started >= maxWaitMs) resolve();
        else setTimeout(check, inFlight === 0 ? Math.max(10, quietMs - quietFor) : quietMs);
      };
      // Give the screens' first effects a moment to send their calls before judging quiet.
      setTimeout(check, quietMs);
    });
  return { api: tracked, whenQuiet };
}
