import type { RequestHandler } from 'express';
import { unsupportedMediaType } from '../../errors';

// JSON for API bodies; multipart and raw bytes for uploads.
const accepted = ['application/json', 'multipart/form-data', 'application/octet-stream'];

/** A body in any other type would reach the handlers as "no body" and fail confusingly; say so instead. */
export const requireKnownBodyType: RequestHandler = (req, _res, next) => {
  const hasBody = req.headers['transfer-encoding'] !== undefined || Number(req.headers['content-length'] ?? 0) > 0;
  if (!hasBody || req.is(accepted)) return next();
  next(unsupportedMediaType('Send the request body as application/json'));
};
