/** The two ways the sketch refuses: a caller passed something out of range, or a stored state is bad. */
import { HeadroomError } from '../errors.js';

export function badArgument(field: string, detail: string, value?: unknown): HeadroomError {
  return new HeadroomError('HR_ERR_SKETCH_ARGUMENT', `${field} ${detail}`, { context: { field, value } });
}

export function badState(field: string, detail: string): HeadroomError {
  return new HeadroomError('HR_ERR_SKETCH_STATE_INVALID', `${field} ${detail}`, { context: { field } });
}
