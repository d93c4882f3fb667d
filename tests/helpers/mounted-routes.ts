import type { Express } from 'express';
import { middlewareMeta, type MiddlewareMeta } from '../../server/http/middleware/route-meta';

export interface MountedRoute {
  method: string;
  /** Express form: the mount paths joined with the route's own. */
  path: string;
  /** What the tagged middleware on the way to the handler checks, in order (router-level `use` included). */
  guards: MiddlewareMeta[];
}

interface Layer {
  rawPath?: unknown;
  handle: ((...args: unknown[]) => unknown) & { stack?: Layer[] };
  route?: { path: unknown; methods: Record<string, boolean>; stack: Layer[] };
}

/**
 * Every route of an Express 5 app, read from its router stack as the app really dispatches: whatever file mounted
 * it and however. A path the walk cannot read as a string (a regular expression, an array) fails loudly instead
 * of being skipped, and so does a tagged guard mounted below a path, whose reach the walk would have to guess.
 */
export function mountedRoutes(app: Express): MountedRoute[] {
  return walkApp(app).routes;
}

/**
 * The paths below which plain middleware (a function that is neither a route nor a router) is mounted. Such a
 * function could answer requests itself, unseen by the route walk, so the tests list where they may sit.
 */
export function plainMiddlewareMounts(app: Express): string[] {
  return [...new Set(walkApp(app).plain)].sort();
}

function walkApp(app: Express): { routes: MountedRoute[]; plain: string[] } {
  const root = (app as unknown as { router: { stack: Layer[] } }).router;
  const out = { routes: [] as MountedRoute[], plain: [] as string[] };
  walk(root.stack, '', [], out);
  return out;
}

function walk(stack: Layer[], prefix: string, inherited: MiddlewareMeta[], out: { routes: MountedRoute[]; plain: string[] }): void {
  const guards = [...inherited];
  for (const layer of stack) {
    if (layer.route) {
      const { path, methods } = layer.route;
      if (typeof path !== 'string') throw new Error(`a route under ${prefix} has a path that is not a string`);
      const own = layer.route.stack.map((l) => middlewareMeta(l.handle)).filter((m): m is MiddlewareMeta => m !== undefined);
      for (const [method, on] of Object.entries(methods)) {
        if (!on) continue;
        if (method === '_all') throw new Error(`${prefix}${path} answers every method; the description needs each one`);
        out.routes.push({ method, path: `${prefix}${path === '/' ? '' : path}` || '/', guards: [...guards, ...own] });
      }
      continue;
    }
    if (typeof layer.rawPath !== 'string') throw new Error(`a layer under ${prefix || '/'} is mounted at a path that is not a string`);
    const mount = layer.rawPath === '/' ? '' : layer.rawPath;
    if (Array.isArray(layer.handle.stack)) {
      walk(layer.handle.stack, `${prefix}${mount}`, guards, out);
      continue;
    }
    const meta = middlewareMeta(layer.handle);
    if (!meta) {
      out.plain.push(`${prefix}${mount}` || '/');
      continue;
    }
    if (mount !== '') throw new Error(`a ${meta.kind} guard is mounted at ${prefix}${mount}; mount guards on routes or routers`);
    guards.push(meta);
  }
}
