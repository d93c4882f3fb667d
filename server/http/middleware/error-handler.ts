import type { ErrorRequestHandler, RequestHandler } from 'express';
import { ZodError } from 'zod';
import type { ErrorBody } from '../../contracts';
import { AppError, isAppError, isConnectionError, notFound, serviceUnavailable } from '../../errors';

/** Zod issues as the client sees them: a dotted path and a message, nothing internal; one entry per unknown key. */
export function zodDetails(err: ZodError): { path: string; message: string }[] {
  return err.issues.flatMap((i) => {
    const base = i.path.map(String);
    if (i.code === 'unrecognized_keys') {
      return i.keys.map((key) => ({ path: [...base, key].join('.'), message: 'Unknown field' }));
    }
    return [{ path: base.join('.'), message: i.message }];
  });
}

function toAppError(err: unknown): AppError | null {
  if (isAppError(err)) return err;
  if (err instanceof ZodError) return new AppError('validation_failed', 400, 'The request is not valid', zodDetails(err));
  const e = err as { type?: string; status?: number; name?: string; code?: string; field?: string };
  // body-parser marks its own errors with a type (express.json).
  switch (e?.type) {
    case 'entity.parse.failed':
      return new AppError('bad_request', 400, 'The request body is not valid JSON');
    case 'entity.too.large':
      return new AppError('payload_too_large', 413, 'The request body is too large');
    case 'encoding.unsupported':
    case 'charset.unsupported':
      return new AppError('unsupported_media_type', 415, 'The request body encoding is not supported');
    case 'request.aborted':
      return new AppError('bad_request', 400, 'The request was aborted');
  }
  if (e?.name === 'MulterError') {
    if (e.code === 'LIMIT_FILE_SIZE' || e.code === 'LIMIT_FIELD_VALUE') {
      return new AppError('payload_too_large', 413, 'An uploaded file is too large', { field: e.field });
    }
    return new AppError('bad_request', 400, 'The upload is not valid', { reason: e.code, field: e.field });
  }
  if (isConnectionError(err)) return serviceUnavailable();
  // http-errors from Express's own middleware (serve-static and the like) carry a 4xx status; a missing
  // file comes without `expose`, so its message (a server path) is never passed on.
  const httpError = err as { status?: number; expose?: boolean; message?: string };
  if (typeof httpError?.status === 'number' && httpError.status >= 400 && httpError.status < 500) {
    if (httpError.status === 404) return notFound('File');
    const message = httpError.expose && httpError.message ? httpError.message : 'The request is not valid';
    return new AppError('bad_request', httpError.status, message);
  }
  return null;
}

/** The one place an error becomes a response; anything unexpected is logged and answered generically. */
export const errorHandler: ErrorRequestHandler = (err, req, res, next) => {
  if (res.headersSent) {
    next(err);
    return;
  }
  let appError = toAppError(err);
  if (!appError) {
    req.log?.error({ err }, 'unhandled error');
    appError = new AppError('internal', 500, 'Something went wrong on our side');
  } else if (appError.status >= 500) {
    req.log?.warn({ err }, appError.message);
  }
  if (appError.retryAfterSeconds !== undefined) res.set('Retry-After', String(appError.retryAfterSeconds));
  const body: ErrorBody = { error: { code: appError.code, message: appError.message } };
  if (appError.details !== undefined) body.error.details = appError.details;
  if (req.complete) res.status(appError.status).json(body);
  else answerBeforeBody(req, res, appError.status, body);
};

/**
 * A refusal decided before the body was read (no session, wrong role, too many uploads…) is sent at once, but the
 * response ends only once the rest of the body has arrived, read and thrown away. A server that closes the
 * connection while the client is still sending makes the client's TCP stack reset it, and the answer already
 * sent is lost with it (RFC 9112 §9.6 asks servers to close gradually for this reason); Node closes right after
 * the response ends when the client asked for `Connection: close`. With Content-Length the client has the whole
 * answer as soon as it arrives and may stop sending; nothing of the body is kept.
 */
function answerBeforeBody(req: Parameters<ErrorRequestHandler>[1], res: Parameters<ErrorRequestHandler>[2], status: number, body: ErrorBody): void {
  const payload = Buffer.from(JSON.stringify(body));
  res.status(status).set({ 'Content-Type': 'application/json; charset=utf-8', 'Content-Length': String(payload.length) });
  res.write(payload);
  const end = () => {
    if (!res.writableEnded) res.end();
  };
  if (req.destroyed) return end();
  req.once('end', end);
  req.once('close', end);
  req.resume();
}

/** Unknown /api paths answer JSON, never the SPA's HTML. */
export const apiNotFound: RequestHandler = (_req, _res, next) => {
  next(notFound('API route'));
};
