import type { Request, RequestHandler } from 'express';
import { unsupportedMediaType } from '../../errors';

// JSON for API bodies; multipart and raw bytes for uploads.
const accepted = ['application/json', 'multipart/form-data', 'application/octet-stream'];

const hasBody = (req: Request) => req.headers['transfer-encoding'] !== undefined || Number(req.headers['content-length'] ?? 0) > 0;

/** A body in any other type would reach the handlers as "no body" and fail confusingly; say so instead. */
export const requireKnownBodyType: RequestHandler = (req, _res, next) => {
  if (!hasBody(req) || req.is(accepted)) return next();
  next(unsupportedMediaType('Send the request body as application/json'));
};

/**
 * Bodies are taken as sent, never inflated: a few kilobytes of gzip or deflate (RFC 9110 §8.4) can expand to
 * gigabytes, so a compressed body's limit would only apply after the memory was spent. Decided from the
 * header alone, before the caller is known or a byte of the body is read.
 */
export const requireIdentityEncoding: RequestHandler = (req, _res, next) => {
  const encoding = (req.headers['content-encoding'] ?? '').trim().toLowerCase();
  if (encoding === '' || encoding === 'identity' || !hasBody(req)) return next();
  next(unsupportedMediaType('Send the request body uncompressed; a Content-Encoding such as gzip or deflate is not accepted'));
};
