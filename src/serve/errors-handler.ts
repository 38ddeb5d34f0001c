/**
 * The one place an API failure becomes a response: HeadroomError codes map to a status through
 * httpStatusOf, the body is always `{ error: { code, message } }`. Anything else is a bug or a library
 * error whose message may carry internals, so it is answered with a generic 500 and handed to `onError`.
 */
import type { ErrorRequestHandler, RequestHandler } from 'express';
import { HeadroomError, httpStatusOf, isHeadroomError } from '../errors.js';

export const notFound: RequestHandler = () => {
  throw new HeadroomError('HR_ERR_API_NOT_FOUND', 'no route answers this path');
};

/** express and its router tag their own client errors (a path that is not valid percent-encoding) with a 4xx status. */
function clientStatus(error: unknown): number | undefined {
  const status = typeof error === 'object' && error !== null ? (error as { status?: unknown }).status : undefined;
  return typeof status === 'number' && status >= 400 && status < 500 ? status : undefined;
}

export function errorHandler(onError: (error: unknown) => void): ErrorRequestHandler {
  return (error: unknown, _req, res, next) => {
    if (res.headersSent) {
      next(error);
      return;
    }
    let known: HeadroomError;
    if (isHeadroomError(error)) known = error;
    else if (clientStatus(error) !== undefined) known = new HeadroomError('HR_ERR_API_BAD_PARAMETER', 'the request cannot be read (bad percent-encoding?)', { cause: error });
    else {
      onError(error);
      known = new HeadroomError('HR_ERR_API_INTERNAL', 'see the server log', { cause: error });
    }
    const parameter = known.context.parameter;
    res
      .status(httpStatusOf(known))
      .json({ error: { code: known.code, message: known.message, ...(typeof parameter === 'string' ? { parameter } : {}) } });
  };
}
