import express, { type Request, type RequestHandler } from 'express';
import { badRequest } from '../../errors';
import { firstIllFormedString, rejectInvalidUtf8 } from './strict-utf8';

const KiB = 1024;
const MiB = 1024 * KiB;

/**
 * The one table of JSON body limits. A body is read only once the server knows who sends it (see
 * validate(), which reads it after authenticate and requireTeamRole), so the limit can follow the caller:
 *  - anonymous: sign-up, sign-in, resets, invitations — a few short fields; 16 KiB is generous.
 *  - signedIn: every route behind authenticate; the largest real body is a split or a run naming 10 000 image ids (~400 KiB).
 *  - codebookImport: a document of 2^14 codewords × 768 components runs to tens of megabytes of JSON.
 */
export const bodyLimits = {
  anonymous: 16 * KiB,
  signedIn: 1 * MiB,
  codebookImport: 64 * MiB,
} as const;

export type BodyLimit = keyof typeof bodyLimits;

const parsers = new Map<BodyLimit, RequestHandler>(
  (Object.keys(bodyLimits) as BodyLimit[]).map((name) => [
    name,
    // inflate: false — a compressed body could expand far beyond its limit's worth of memory before the
    // limit applies; requireIdentityEncoding refuses such bodies earlier, this keeps the parser honest too.
    express.json({ limit: bodyLimits[name], inflate: false, verify: rejectInvalidUtf8 }),
  ]),
);

const read = new WeakSet<Request>();

/** Reads a JSON body of at most `bodyLimits[limit]` bytes; put it after authenticate and the role check. */
export function jsonBody(limit: BodyLimit): RequestHandler {
  const parse = parsers.get(limit)!;
  return (req, res, next) => {
    if (read.has(req)) return next();
    read.add(req);
    parse(req, res, (err?: unknown) => {
      if (err) return next(err);
      const where = firstIllFormedString(req.body);
      if (where !== null) return next(badRequest(`The request body holds text that is not valid Unicode (a lone surrogate) at ${where}`, { field: where }));
      next();
    });
  };
}

/** Whether a JSON body parser has already run for this request. */
export function bodyWasRead(req: Request): boolean {
  return read.has(req);
}

/** The limit for a body nobody declared one for: by whether the caller is signed in. */
export function defaultBodyLimit(req: Request): BodyLimit {
  return req.user ? 'signedIn' : 'anonymous';
}
