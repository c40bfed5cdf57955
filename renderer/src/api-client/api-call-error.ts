import type { ApiError } from '../../../src/api/contract.js';

/** What every failed call rejects with: an Error that keeps the ApiError's fields. */
export class ApiCallError extends Error implements ApiError {
  readonly kind: ApiError['kind'];
  readonly issues?: ApiError['issues'];
  readonly details?: ApiError['details'];

  constructor(error: ApiError) {
    super(error.message);
    this.name = 'ApiCallError';
    this.kind = error.kind;
    if (error.issues) this.issues = error.issues;
    if (error.details) this.details = error.details;
  }
}
