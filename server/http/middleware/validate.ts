import type { Request, RequestHandler } from 'express';
import type { z } from 'zod';
import { AppError } from '../../errors';
import { bodyWasRead, defaultBodyLimit, jsonBody } from './body';
import { zodDetails } from './error-handler';
import { withMeta } from './route-meta';

export interface Schemas {
  body?: z.ZodType;
  query?: z.ZodType;
  params?: z.ZodType;
}

export type Parsed<S extends Schemas> = {
  [K in keyof S]: S[K] extends z.ZodType ? z.output<S[K]> : never;
};

type Issue = { path: string; message: string; location: string };

function check(schema: z.ZodType | undefined, input: unknown, location: string, issues: Issue[]): unknown {
  if (!schema) return undefined;
  const result = schema.safeParse(input);
  if (result.success) return result.data;
  issues.push(...zodDetails(result.error).map((d) => ({ ...d, location })));
  return undefined;
}

const invalid = (issues: Issue[]) => new AppError('validation_failed', 400, 'The request is not valid', issues);

/**
 * Parses params, query and body with zod; bodies are strict objects in the contracts, so unknown fields
 * are refused rather than silently dropped. Params and query are checked before a byte of the body is
 * read. With a body schema, the JSON body is read here (after authenticate and the role check, which
 * come before validate on every route), with the limit for the caller (body.ts), unless the route
 * declared jsonBody(limit) itself.
 */
export function validate<S extends Schemas>(schemas: S): RequestHandler {
  return withMeta((req, res, next) => {
    const issues: Issue[] = [];
    const valid: { body?: unknown; query?: unknown; params?: unknown } = {
      params: check(schemas.params, req.params, 'params', issues),
      query: check(schemas.query, req.query, 'query', issues),
    };
    if (issues.length > 0) return next(invalid(issues));
    const finish = (err?: unknown) => {
      if (err) return next(err);
      valid.body = check(schemas.body, req.body ?? {}, 'body', issues);
      if (issues.length > 0) return next(invalid(issues));
      req.valid = valid;
      next();
    };
    if (schemas.body && !bodyWasRead(req)) jsonBody(defaultBodyLimit(req))(req, res, finish);
    else finish();
  }, { kind: 'validate', schemas });
}

/** The parsed input of a request that went through validate(schemas). */
export function validated<S extends Schemas>(req: Request, _schemas: S): Parsed<S> {
  if (!req.valid) throw new Error('validated() called on a route without validate()');
  return req.valid as Parsed<S>;
}
