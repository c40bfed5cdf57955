import type { ApiParsedInput, LongTaskMethod } from './contract.js';

/** What a long task's worker needs: the method, its validated input and the database file. */
export type LongTaskRequest<M extends LongTaskMethod = LongTaskMethod> = {
  [K in M]: { method: K; input: ApiParsedInput<K>; dbPath: string };
}[M];
