/**
 * One place for every error headroom throws. Each code is stable (`HR_ERR_<AREA>_<PROBLEM>`), documented
 * in DEVELOPERS.md (a test checks that), and maps to an HTTP status and a CLI exit code in one place each.
 * Bad *messages* are not errors: the decoder returns rejections (src/events/reasons.ts) and counts them.
 */

export interface ErrorSpec {
  readonly message: string;
  readonly retriable: boolean;
  readonly httpStatus: number;
  readonly exitCode: number;
}

export const ERROR_CODES = {
  HR_ERR_CONFIG_INVALID: { message: 'configuration is invalid', retriable: false, httpStatus: 500, exitCode: 78 },
  HR_ERR_CONFIG_UNREADABLE: { message: 'configuration file cannot be read', retriable: false, httpStatus: 500, exitCode: 66 },
  HR_ERR_CLI_NOT_BUILT: { message: 'this command is not built yet', retriable: false, httpStatus: 501, exitCode: 69 },
  HR_ERR_CLI_USAGE: { message: 'bad command-line usage', retriable: false, httpStatus: 400, exitCode: 64 },
  HR_ERR_INPUT_UNREADABLE: { message: 'input cannot be read', retriable: false, httpStatus: 400, exitCode: 66 },
  HR_ERR_INPUT_EMPTY: { message: 'input holds no valid events', retriable: false, httpStatus: 400, exitCode: 65 },
  HR_ERR_INPUT_AMBIGUOUS: { message: 'input holds several models; choose one', retriable: false, httpStatus: 400, exitCode: 64 },
  HR_ERR_INPUT_TRUNCATED: { message: 'input ends early', retriable: false, httpStatus: 400, exitCode: 65 },
  HR_ERR_OUTPUT_UNWRITABLE: { message: 'output cannot be written', retriable: false, httpStatus: 500, exitCode: 73 },
  HR_ERR_REFERENCE_INVALID: { message: 'reference file is invalid', retriable: false, httpStatus: 500, exitCode: 65 },
  HR_ERR_REFERENCE_ARGUMENT: { message: 'reference option is out of range', retriable: false, httpStatus: 400, exitCode: 70 },
  HR_ERR_SKETCH_STATE_INVALID: { message: 'serialised sketch state is invalid', retriable: false, httpStatus: 500, exitCode: 65 },
  HR_ERR_SKETCH_ARGUMENT: { message: 'sketch argument is out of range', retriable: false, httpStatus: 400, exitCode: 70 },
  HR_ERR_COMPARE_ARGUMENT: { message: 'comparison argument is out of range', retriable: false, httpStatus: 400, exitCode: 70 },
  HR_ERR_ALERT_ARGUMENT: { message: 'alert argument is out of range', retriable: false, httpStatus: 400, exitCode: 70 },
  HR_ERR_ALERT_STATE_INVALID: { message: 'saved alert state is invalid', retriable: false, httpStatus: 500, exitCode: 65 },
  HR_ERR_HARNESS_KAFKA_UNAVAILABLE: { message: 'no Kafka broker could be had', retriable: false, httpStatus: 503, exitCode: 69 },
  HR_ERR_HARNESS_KAFKA_START: { message: 'the local Kafka broker did not start', retriable: true, httpStatus: 503, exitCode: 69 },
  HR_ERR_HARNESS_PROMETHEUS_UNAVAILABLE: { message: 'prometheus or promtool is missing', retriable: false, httpStatus: 503, exitCode: 69 },
  HR_ERR_HARNESS_CHROMIUM_UNAVAILABLE: { message: 'chromium is missing', retriable: false, httpStatus: 503, exitCode: 69 },
  HR_ERR_API_NOT_FOUND: { message: 'no such resource', retriable: false, httpStatus: 404, exitCode: 66 },
  HR_ERR_API_BAD_PARAMETER: { message: 'bad request parameter', retriable: false, httpStatus: 400, exitCode: 64 },
  HR_ERR_API_INTERNAL: { message: 'the server failed to answer', retriable: true, httpStatus: 500, exitCode: 70 },
  HR_ERR_SERVE_ARGUMENT: { message: 'metrics or API option is invalid', retriable: false, httpStatus: 500, exitCode: 70 },
  HR_ERR_SERVE_PAGE_MISSING: { message: "the page's files cannot be read", retriable: false, httpStatus: 500, exitCode: 69 },
  HR_ERR_STATE_INVALID: { message: 'partition state is invalid', retriable: false, httpStatus: 500, exitCode: 65 },
  HR_ERR_STATE_ARGUMENT: { message: 'partition state argument is out of range', retriable: false, httpStatus: 400, exitCode: 70 },
  HR_ERR_CHECKPOINT_CORRUPT: { message: 'stored checkpoint is corrupt; it is refused, not reset', retriable: false, httpStatus: 500, exitCode: 65 },
  HR_ERR_CHECKPOINT_IO: { message: 'checkpoint store cannot read or write', retriable: true, httpStatus: 503, exitCode: 74 },
  HR_ERR_CHECKPOINT_TOPIC: { message: 'the state topic cannot hold checkpoints', retriable: false, httpStatus: 500, exitCode: 78 },
  HR_ERR_CHECKPOINT_CLOSED: { message: 'checkpoint store is closed', retriable: false, httpStatus: 503, exitCode: 70 },
  HR_ERR_NOTIFY_ARGUMENT: { message: 'notifier option is invalid', retriable: false, httpStatus: 500, exitCode: 70 },
  HR_ERR_WATCH_START: { message: 'the watcher could not start', retriable: true, httpStatus: 503, exitCode: 69 },
  HR_ERR_WATCH_RESTORE: { message: 'a partition state could not be restored', retriable: false, httpStatus: 500, exitCode: 65 },
  HR_ERR_WATCH_CONSUMER_CRASHED: { message: 'the Kafka consumer stopped and will not restart', retriable: true, httpStatus: 503, exitCode: 69 },
  HR_ERR_WATCH_SHUTDOWN: { message: 'shutdown did not finish cleanly', retriable: false, httpStatus: 500, exitCode: 1 },
  HR_ERR_REPLAY_ARGUMENT: { message: 'replay argument is out of range', retriable: false, httpStatus: 400, exitCode: 70 },
  HR_ERR_REPLAY_CHART_LIBRARY: { message: 'the HTML report\'s chart library cannot be read', retriable: false, httpStatus: 500, exitCode: 69 },
  HR_ERR_REPLAY_KAFKA: { message: 'the Kafka time range could not be read', retriable: true, httpStatus: 503, exitCode: 69 },
  HR_ERR_DEMO_ARGUMENT: { message: 'demo argument is out of range', retriable: false, httpStatus: 400, exitCode: 70 },
  HR_ERR_DEMO_KAFKA: { message: 'the demo could not produce its scenario to Kafka', retriable: true, httpStatus: 503, exitCode: 69 },
} as const satisfies Record<string, ErrorSpec>;

export type ErrorCode = keyof typeof ERROR_CODES;

export class HeadroomError extends Error {
  readonly code: ErrorCode;
  readonly retriable: boolean;
  readonly context: Readonly<Record<string, unknown>>;

  constructor(code: ErrorCode, detail: string, options: { cause?: unknown; context?: Record<string, unknown> } = {}) {
    super(`${ERROR_CODES[code].message}: ${detail}`, options.cause === undefined ? undefined : { cause: options.cause });
    this.name = 'HeadroomError';
    this.code = code;
    this.retriable = ERROR_CODES[code].retriable;
    this.context = options.context ?? {};
  }
}

export function isHeadroomError(value: unknown): value is HeadroomError {
  return value instanceof HeadroomError;
}

export function httpStatusOf(error: unknown): number {
  return isHeadroomError(error) ? ERROR_CODES[error.code].httpStatus : 500;
}

export function exitCodeOf(error: unknown): number {
  return isHeadroomError(error) ? ERROR_CODES[error.code].exitCode : 1;
}
