// Lint: TypeScript rules plus the layering of the project (see DEVELOPERS.md, "Layers").
// The layer rule is local: it resolves each relative import to a path and checks it against the zones,
// which keeps the rules readable and needs no import resolver.
import { existsSync, readFileSync, statSync } from 'node:fs';
import path from 'node:path';
import tseslint from 'typescript-eslint';

const root = path.dirname(new URL(import.meta.url).pathname);
const rel = (file) => path.relative(root, file).split(path.sep).join('/');
const under = (p, dir) => p === dir || p.startsWith(`${dir}/`);

const serverOnlyPackages = ['express', 'knex', 'mysql2', 'passport', 'passport-jwt', 'pino', 'pino-http', 'multer', 'nodemailer', 'smtp-server', 'piscina'];
const databasePackages = ['knex', 'mysql2'];

// The engine's inner layers, lowest first (DEVELOPERS.md, "Layers"): a file may import its own layer and those
// below it, never one above. Root files other than index.ts (vocabulary, input-error) are leaves; index.ts is the top.
const engineLayers = ['(leaf)', 'core', 'wasm', 'parallel', 'training', 'structures', 'io', 'format', 'metrics', 'memory', 'firmware', 'channel', 'model', '(entry)'];
function engineLayer(p) {
  const inner = p.slice('server/engine/'.length).replace(/\.(ts|tsx|js|mjs)$/, '');
  const slash = inner.indexOf('/');
  if (slash < 0) return inner === 'index' ? '(entry)' : '(leaf)';
  return inner.slice(0, slash);
}

/** Returns a message when `from` may not import `target` (a project path or a package name). */
function violation(from, target, isPackage) {
  const pkg = isPackage ? target.split('/').slice(0, target.startsWith('@') ? 2 : 1).join('/') : null;
  const dbAllowed = under(from, 'server/db') || under(from, 'migrations') || from === 'knexfile.ts' || under(from, 'tests');
  if (pkg && databasePackages.includes(pkg) && !dbAllowed) return `only server/db, migrations/ and knexfile.ts import ${pkg}`;
  if (under(from, 'server/engine')) {
    if (pkg && serverOnlyPackages.includes(pkg)) return `the engine never imports ${pkg}`;
    if (!pkg && !under(target, 'server/engine')) return 'the engine imports nothing outside server/engine';
    if (!pkg) {
      const mine = engineLayer(from);
      const theirs = engineLayer(target);
      const [a, b] = [engineLayers.indexOf(mine), engineLayers.indexOf(theirs)];
      if (a >= 0 && b >= 0 && b > a) return `engine layers go one way (${engineLayers.slice(1, -1).join(' < ')}): ${mine} never imports ${theirs}`;
    }
  }
  if (pkg) return null;
  if (under(from, 'server/http/routes') && (under(target, 'server/db') || under(target, 'server/engine') || target === 'knexfile')) {
    return 'routes call services; they never import the database layer or the engine';
  }
  // One direction between jobs and services: handlers use services, services never reach into jobs. A service may
  // see only the interfaces it is handed (the queue, the event bus, the worker registry) and the pool tasks' plain
  // data types.
  const serviceMaySee = ['server/jobs/queue', 'server/jobs/events', 'server/jobs/tasks', 'server/jobs/compute/registry'];
  if (under(from, 'server/services') && under(target, 'server/jobs') && !serviceMaySee.some((d) => under(target, d))) {
    return 'services never import server/jobs (handlers, runner, pool): they enqueue through the queue interface';
  }
  if (under(from, 'server/jobs/tasks') && ['server/db', 'server/http', 'server/services'].some((d) => under(target, d))) {
    return 'worker tasks rebuild what they need from ids; they never import db, http or services';
  }
  if (under(from, 'src')) {
    if (under(target, 'server') && !under(target, 'server/contracts')) return 'the client imports from server/ only server/contracts';
    const mine = from.match(/^src\/features\/([^/]+)/);
    const theirs = target.match(/^src\/features\/([^/]+)/);
    if (mine && theirs && mine[1] !== theirs[1]) return `features never import each other (${mine[1]} → ${theirs[1]})`;
  }
  return null;
}

const layers = {
  meta: { type: 'problem', schema: [] },
  create(context) {
    const from = rel(context.filename);
    function check(node) {
      const spec = node.source && node.source.value;
      if (typeof spec !== 'string' || spec.startsWith('node:')) return;
      const isPackage = !spec.startsWith('.') && !spec.startsWith('/');
      const target = isPackage ? spec : rel(path.resolve(path.dirname(context.filename), spec)).replace(/\.(ts|tsx|js|mjs)$/, '');
      const message = violation(from, target, isPackage);
      if (message) context.report({ node: node.source, message: `layering: ${message}` });
    }
    return { ImportDeclaration: check, ExportNamedDeclaration: check, ExportAllDeclaration: check, ImportExpression: check };
  },
};

// Import cycles, read from the files themselves: value imports only (`import type` is erased at build time and
// cannot form a cycle at run time). Each file's imports are read once per lint run.
const importsOf = new Map();
const importPattern = /(?:^|\n)\s*(?:import|export)\s+(type\s+)?(?:[^'";]*?\sfrom\s+)?['"](\.[^'"]+)['"]/g;
function resolveImport(fromFile, spec) {
  const base = path.resolve(path.dirname(fromFile), spec);
  for (const candidate of [base, `${base}.ts`, `${base}.tsx`, base.replace(/\.js$/, '.ts'), path.join(base, 'index.ts'), path.join(base, 'index.tsx')]) {
    if (existsSync(candidate) && statSync(candidate).isFile()) return candidate;
  }
  return null;
}
function valueImports(file) {
  let list = importsOf.get(file);
  if (list) return list;
  list = [];
  const text = existsSync(file) ? readFileSync(file, 'utf8') : '';
  for (const m of text.matchAll(importPattern)) {
    if (m[1]) continue;
    const target = resolveImport(file, m[2]);
    if (target) list.push(target);
  }
  importsOf.set(file, list);
  return list;
}
/** A path of value imports from `start` back to `goal`, or null. */
function pathBack(start, goal) {
  const seen = new Set([start]);
  const stack = [[start, [start]]];
  while (stack.length > 0) {
    const [file, trail] = stack.pop();
    for (const next of valueImports(file)) {
      if (next === goal) return trail;
      if (!seen.has(next)) {
        seen.add(next);
        stack.push([next, [...trail, next]]);
      }
    }
  }
  return null;
}
const noCycle = {
  meta: { type: 'problem', schema: [] },
  create(context) {
    const file = context.filename;
    function check(node) {
      const spec = node.source && node.source.value;
      if (typeof spec !== 'string' || !spec.startsWith('.') || node.importKind === 'type' || node.exportKind === 'type') return;
      const target = resolveImport(file, spec);
      if (!target) return;
      const trail = target === file ? [] : pathBack(target, file);
      if (trail) context.report({ node: node.source, message: `import cycle: ${[file, ...trail, file].map(rel).join(' → ')}` });
    }
    return { ImportDeclaration: check, ExportNamedDeclaration: check, ExportAllDeclaration: check };
  },
};

export default tseslint.config(
  { ignores: ['dist/**', 'node_modules/**', 'data/**', '.tmp/**', 'test-results/**', '**/*.wasm', 'server/engine/wasm/assembly/**'] },
  ...tseslint.configs.recommended,
  {
    plugins: { cellwright: { rules: { layers, 'no-cycle': noCycle } } },
    rules: {
      'cellwright/layers': 'error',
      'cellwright/no-cycle': 'error',
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_', caughtErrors: 'none' }],
      '@typescript-eslint/no-explicit-any': 'error',
    },
  },
  {
    // Routes stay thin: authenticate → role → validate → one service call.
    files: ['server/http/routes/**/*.ts'],
    rules: { 'max-lines-per-function': ['error', { max: 40, skipBlankLines: true, skipComments: true }] },
  },
  {
    files: ['**/*.mjs', '**/*.js', '**/*.cjs'],
    languageOptions: { globals: { process: 'readonly', console: 'readonly', URL: 'readonly' } },
  },
);
