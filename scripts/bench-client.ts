// The studio's first page as a browser fetches it: the client built with vite into a scratch folder, and the gzip
// size of every script and style sheet its index.html loads before any lazy route (the entry, its module preloads,
// its style sheets). Also prints the run page's first render as the browser tests last measured it. Figures, not a
// test. Run alone: node --import tsx scripts/bench-client.ts
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { gzipSync } from 'node:zlib';
import { FIRST_RENDER_FILE } from '../tests/browser/first-render-file';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
/** The first page's scripts and styles, gzip-compressed, at most this many bytes (300 kB). */
const TARGET_FIRST_PAGE_GZIP = 300_000;

/** Asset paths index.html loads at once: module scripts, module preloads and style sheets (same-origin only). */
export function firstPageAssets(html: string): string[] {
  const out: string[] = [];
  for (const tag of html.match(/<(script|link)\b[^>]*>/g) ?? []) {
    const isScript = tag.startsWith('<script') && /\btype="module"/.test(tag);
    const isLink = tag.startsWith('<link') && /\brel="(modulepreload|stylesheet)"/.test(tag);
    const url = /\b(?:src|href)="(\/[^"]+)"/.exec(tag)?.[1];
    if ((isScript || isLink) && url) out.push(url);
  }
  return out;
}

export async function clientBench(): Promise<void> {
  console.log('\nstudio client (vite build; first page = what index.html loads before any lazy route)');
  const outDir = mkdtempSync(path.join(os.tmpdir(), 'cw-bench-client-'));
  try {
    const build = spawnSync(process.execPath, [path.join(root, 'node_modules', 'vite', 'bin', 'vite.js'), 'build', '--outDir', outDir, '--emptyOutDir', '--logLevel', 'warn'], { cwd: root, encoding: 'utf8' });
    if (build.status !== 0) throw new Error(`vite build failed: ${build.stderr.trim().split('\n').pop()}`);
    const assets = firstPageAssets(readFileSync(path.join(outDir, 'index.html'), 'utf8'));
    let raw = 0;
    let gzip = 0;
    for (const asset of assets) {
      const bytes = readFileSync(path.join(outDir, asset));
      raw += bytes.length;
      // Level 9, as a static server that compresses ahead of time would; the size a browser downloads.
      gzip += gzipSync(bytes, { level: 9 }).length;
    }
    const kb = (b: number) => `${(b / 1000).toFixed(1)} kB`;
    console.log(`  first page: ${assets.length} files, ${kb(raw)} raw, ${kb(gzip)} gzip; target ≤ ${kb(TARGET_FIRST_PAGE_GZIP)} gzip: ${gzip <= TARGET_FIRST_PAGE_GZIP ? 'met' : 'NOT met'}`);
  } finally {
    rmSync(outDir, { recursive: true, force: true });
  }
  if (existsSync(FIRST_RENDER_FILE)) {
    const r = JSON.parse(readFileSync(FIRST_RENDER_FILE, 'utf8')) as { run: string; firstLoadMs: number; laterLoadsMs: number[]; measuredAt: string };
    console.log(`  run page first render (${r.run}, demo data): ${r.firstLoadMs} ms, then ${r.laterLoadsMs.join(' and ')} ms on reloads (browser tests, ${r.measuredAt})`);
  } else {
    console.log('  run page first render: not measured yet (npx vitest run --project browser tests/browser/run-page-render.test.ts)');
  }
}

if (process.argv[1] && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  clientBench().catch((err) => {
    process.stderr.write(`bench-client: ${err instanceof Error ? err.message : String(err)}\n`);
    process.exitCode = 1;
  });
}
