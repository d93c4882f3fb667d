// The hostile-input and access tests cover only the routes in tests/api/hostile/routes.ts; this keeps that
// table equal to what server/app.ts mounts, so a new route cannot slip past them.
import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { routes } from './routes';

const root = fileURLToPath(new URL('../../..', import.meta.url));
const routesDir = path.join(root, 'server/http/routes');

/** Router factory name → the (method, path) pairs it registers, read from the route modules' source. */
function routerRoutes(): Map<string, { method: string; path: string }[]> {
  const out = new Map<string, { method: string; path: string }[]>();
  for (const file of readdirSync(routesDir).filter((f) => f.endsWith('.ts'))) {
    const source = readFileSync(path.join(routesDir, file), 'utf8');
    const factories = [...source.matchAll(/export function (\w+Router)\s*\(/g)];
    const collect = (text: string) =>
      [...text.matchAll(/\br\.(get|post|patch|delete|put)\(\s*'([^']*)'/g)].map((m) => ({ method: m[1].toUpperCase(), path: m[2] }));
    if (factories.length === 1) out.set(factories[0][1], collect(source));
    else {
      // Several routers in one module: each owns the text up to the next one.
      factories.forEach((f, i) => out.set(f[1], collect(source.slice(f.index, factories[i + 1]?.index ?? source.length))));
    }
  }
  return out;
}

/** Every mounted (method, full path), with parameter names reduced to ":p". */
function mountedRoutes(): string[] {
  const app = readFileSync(path.join(root, 'server/app.ts'), 'utf8');
  const byRouter = routerRoutes();
  const all = new Set<string>();
  for (const m of app.matchAll(/app\.use\('(\/api[^']*)',\s*(\w+Router)\(/g)) {
    const registered = byRouter.get(m[2]);
    if (!registered) throw new Error(`router ${m[2]} mounted in app.ts was not found in server/http/routes`);
    for (const r of registered) all.add(normalise(r.method, `${m[1]}${r.path === '/' ? '' : r.path}`));
  }
  return [...all].sort();
}

const normalise = (method: string, p: string) => `${method} ${p.replace(/:[A-Za-z]+/g, ':p')}`;

describe('the route table', () => {
  it('lists exactly the routes the app mounts', () => {
    const mounted = mountedRoutes();
    expect(mounted.length).toBeGreaterThan(30);
    const tabled = [...new Set(routes.map((r) => normalise(r.method, r.path)))].sort();
    expect(tabled).toEqual(mounted);
  });
});
