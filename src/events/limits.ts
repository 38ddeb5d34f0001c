import { HeadroomError } from '../errors.js';

/**
 * Bounds on what a single message may hold. Names become Prometheus label values and page text, so
 * they are kept short and printable; the byte limit protects the parser from a runaway producer.
 */
export interface DecodeLimits {
  /** Largest message accepted, in bytes; checked before decoding or parsing. */
  readonly maxBytes: number;
  /** Longest model, version, segment key or value, class name or string label, in UTF-16 code units. */
  readonly maxTextLength: number;
  /** Longest event id, in UTF-16 code units (ids are logged and shown, never used as label values). */
  readonly maxIdLength: number;
  /** Most keys a segment map may have; each key adds series, so this bounds cardinality per event. */
  readonly maxSegmentKeys: number;
}

export const DEFAULT_DECODE_LIMITS: DecodeLimits = Object.freeze({
  maxBytes: 1024 * 1024,
  maxTextLength: 128,
  maxIdLength: 256,
  maxSegmentKeys: 8,
});

/**
 * Fills in defaults and checks the result once, at start-up, so the hot path can trust it.
 * `path` names where the limits came from in the configuration, for the error message.
 */
export function resolveDecodeLimits(partial: Partial<DecodeLimits> = {}, path = 'decode'): DecodeLimits {
  const limits = { ...DEFAULT_DECODE_LIMITS, ...partial };
  for (const [key, value] of Object.entries(limits)) {
    // Zero segment keys is a sensible way to forbid segments; every other limit must admit something.
    const min = key === 'maxSegmentKeys' ? 0 : 1;
    if (!Number.isSafeInteger(value) || value < min) {
      throw new HeadroomError('HR_ERR_CONFIG_INVALID', `${path}.${key} must be an integer >= ${min}, got ${String(value)}`, {
        context: { field: `${path}.${key}`, value },
      });
    }
  }
  return Object.freeze(limits);
}
