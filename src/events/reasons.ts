/**
 * Why a message was turned away. Each code is a stable Prometheus label value of
 * `headroom_events_rejected_total{reason}` and a dead-letter header, so codes are only ever added, never
 * renamed. Rejections are values, not errors: bad input is counted and never stops the consumer.
 */

export const REJECTION_REASONS = {
  too_large: 'the message is longer than the configured byte limit (checked before parsing)',
  not_utf8: 'the bytes are not valid UTF-8, or a \\u escape leaves a lone surrogate that has no UTF-8 form',
  not_json: 'the text is not valid JSON',
  not_object: 'the message is JSON but not an object',
  missing_field: 'a required field is absent (or the time is absent and the source gave no timestamp)',
  wrong_type: 'a field holds the wrong JSON type, e.g. a string where a number belongs',
  not_finite: 'a number overflows to infinity (e.g. 1e999)',
  unknown_score_kind: 'score.kind is not one of probability, logit, votes, classes, margin',
  probability_out_of_range: 'score.p is outside [0, 1]',
  votes_total_not_positive: 'score.total is zero or negative',
  votes_sum_exceeds_total: '|score.sum| is larger than score.total',
  classes_too_few: 'score.values names fewer than two classes',
  class_value_negative: 'a class value in score.values is negative',
  classes_not_normalised: 'the class values do not sum to 1 (tolerance 1e-6)',
  bad_class_name: 'a class name is reserved (__proto__)',
  margin_out_of_range: 'score.value of a margin score is outside [0, 1]',
  bad_time: 'time is neither an ISO-8601 date-time with a zone nor epoch milliseconds in range',
  empty_value: 'a name (id, model, version, segment key or value, class name, label) is the empty string',
  value_too_long: 'a name is longer than the configured limit',
  control_character: 'a name holds a control character (U+0000-U+001F, U+007F-U+009F)',
  too_many_segment_keys: 'segment has more keys than the configured limit',
  bad_segment_key: 'a segment key contains "=" (series are named key=value) or is __proto__',
  bad_label: 'label is not a string, number or boolean, or does not fit the score (see src/margin)',
  csv_field_count: 'a CSV row has more or fewer fields than the header',
  csv_bad_quote: 'a CSV field has a quote inside an unquoted field or text after its closing quote',
  csv_unclosed_quote: 'a quoted CSV field is still open at the end of the file',
} as const satisfies Record<string, string>;

export type RejectionReason = keyof typeof REJECTION_REASONS;

export const REJECTION_REASON_CODES = Object.keys(REJECTION_REASONS) as readonly RejectionReason[];

export function isRejectionReason(value: unknown): value is RejectionReason {
  return typeof value === 'string' && Object.hasOwn(REJECTION_REASONS, value);
}

/**
 * `field` is the offending path (`score.p`, `segment.line`), `''` for the message as a whole. Keys that
 * are not plain identifiers are quoted (`segment["a=b"]`), so the path is safe to log or put in a header.
 */
export interface Rejection {
  readonly ok: false;
  readonly reason: RejectionReason;
  readonly field: string;
  readonly detail: string;
}

export function rejection(reason: RejectionReason, field: string, detail: string): Rejection {
  return { ok: false, reason, field, detail };
}
