import { HeadroomError } from '../errors.js';

export function alertArgument(detail: string, context: Record<string, unknown> = {}): HeadroomError {
  return new HeadroomError('HR_ERR_ALERT_ARGUMENT', detail, { context });
}

export function alertStateInvalid(field: string, detail: string): HeadroomError {
  return new HeadroomError('HR_ERR_ALERT_STATE_INVALID', `${field}: ${detail}`, { context: { field } });
}
