// Lint: TypeScript rules plus the layering of the project (see DEVELOPERS.md, "Layers").
// The layer rule is local: it resolves each relative import to a path and checks it against the zones,
// which keeps the rules readable and needs no import resolver.
import path from 'node:path';
import tseslint from 'typescript-eslint';

const root = path.dirname(new URL(import.meta.url).pathname);
const rel = (file) => path.relative(root, file).split(path.sep).join('/');
const under = (p, dir) => p === dir || p.startsWith(`${dir}/`);

const serverOnlyPackages = ['express', 'knex', 'mysql2', 'passport', 'passport-jwt', 'pino', 'pino-http', 'multer', 'nodemailer', 'smtp-server', 'piscina'];
const databasePackages = ['knex', 'mysql2'];

/** Returns a message when `from` may not import `target` (a project path or a package name). */
function violation(from, target, isPackage) {
  const pkg = isPackage ? target.split('/').slice(0, target.startsWith('@') ? 2 : 1).join('/') : null;
  const dbAllowed = under(from, 'server/db') || under(from, 'migrations') || from === 'knexfile.ts' || under(from, 'tests');
  if (pkg && databasePackages.includes(pkg) && !dbAllowed) return `only server/db, migrations/ and knexfile.ts import ${pkg}`;
  if (under(from, 'server/engine')) {
    if (pkg && serverOnlyPackages.includes(pkg)) return `the engine never imports ${pkg}`;
    if (!pkg && !under(target, 'server/engine')) return 'the engine imports nothing outside server/engine';
  }
  if (pkg) return null;
  if (under(from, 'server/http/routes') && (under(target, 'server/db') || under(target, 'server/engine') || target === 'knexfile')) {
    return 'routes call services; they never import the database layer or the engine';
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

export default tseslint.config(
  { ignores: ['dist/**', 'node_modules/**', 'data/**', '.tmp/**', 'test-results/**', '**/*.wasm', 'server/engine/wasm/assembly/**'] },
  ...tseslint.configs.recommended,
  {
    plugins: { cellwright: { rules: { layers } } },
    rules: {
      'cellwright/layers': 'error',
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
