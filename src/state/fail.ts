/** How src/state refuses: a caller passed something out of range, or a restored state is bad. */
import { HeadroomError } from '../errors.js';

export function badArgument(field: string, detail: string, value?: unknown): HeadroomError {
  return new HeadroomError('HR_ERR_STATE_ARGUMENT', `${field} ${detail}`, { context: { field, value } });
}

export function badState(field: string, detail: string, cause?: unknown): HeadroomError {
  return new HeadroomError('HR_ERR_STATE_INVALID', `${field} ${detail}`, { context: { field }, ...(cause === undefined ? {} : { cause }) });
}
