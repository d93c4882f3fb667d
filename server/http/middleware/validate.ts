import type { Request, RequestHandler } from 'express';
import type { z } from 'zod';
import { AppError } from '../../errors';
import { zodDetails } from './error-handler';

export interface Schemas {
  body?: z.ZodType;
  query?: z.ZodType;
  params?: z.ZodType;
}

export type Parsed<S extends Schemas> = {
  [K in keyof S]: S[K] extends z.ZodType ? z.output<S[K]> : never;
};

/**
 * Parses body, query and params with zod; bodies are strict objects in the contracts, so unknown fields
 * are refused rather than silently dropped.
 */
export function validate<S extends Schemas>(schemas: S): RequestHandler {
  return (req, _res, next) => {
    const valid: { body?: unknown; query?: unknown; params?: unknown } = {};
    const issues: { path: string; message: string; location: string }[] = [];
    for (const part of ['params', 'query', 'body'] as const) {
      const schema = schemas[part];
      if (!schema) continue;
      const input = part === 'body' ? (req.body ?? {}) : req[part];
      const result = schema.safeParse(input);
      if (result.success) valid[part] = result.data;
      else issues.push(...zodDetails(result.error).map((d) => ({ ...d, location: part })));
    }
    if (issues.length > 0) {
      next(new AppError('validation_failed', 400, 'The request is not valid', issues));
      return;
    }
    req.valid = valid;
    next();
  };
}

/** The parsed input of a request that went through validate(schemas). */
export function validated<S extends Schemas>(req: Request, _schemas: S): Parsed<S> {
  if (!req.valid) throw new Error('validated() called on a route without validate()');
  return req.valid as Parsed<S>;
}
