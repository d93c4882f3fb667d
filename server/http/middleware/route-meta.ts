import type { RequestHandler } from 'express';
import type { Role } from '../../contracts';
import type { Schemas } from './validate';

/**
 * What a guarding middleware does, attached to the handler itself. The API description (server/http/description)
 * is checked against these on the mounted app (tests/api/openapi.test.ts), so a route's documented access and
 * input cannot differ from the middleware that really guards it.
 */
export type MiddlewareMeta =
  | { kind: 'authenticate' }
  | { kind: 'identify' }
  | { kind: 'role'; roles: readonly Role[] }
  | { kind: 'validate'; schemas: Schemas };

const metaKey = Symbol.for('cellwright.middleware-meta');

export function withMeta<H extends RequestHandler>(handler: H, meta: MiddlewareMeta): H {
  Object.defineProperty(handler, metaKey, { value: meta, enumerable: false });
  return handler;
}

export function middlewareMeta(handler: unknown): MiddlewareMeta | undefined {
  if (typeof handler !== 'function') return undefined;
  return (handler as unknown as Record<symbol, MiddlewareMeta | undefined>)[metaKey];
}
