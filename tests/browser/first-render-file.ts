import { fileURLToPath } from 'node:url';

/** Where tests/browser/run-page-render.test.ts leaves its figure for the bench (test-results/ is gitignored). */
export const FIRST_RENDER_FILE = fileURLToPath(new URL('../../test-results/browser/run-page-first-render.json', import.meta.url));
