// The decoder cost panel on the page of a tree codebook and of an entropy-constrained one, both imported into the demo
// team as documents (hand-built, invented codewords): tables, operations per pixel and the longest code of a block.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { serializeCodebook } from '../../server/engine';
import { startServer, type StartedServer } from '../helpers/server';
import { combChildren, structureBook } from '../helpers/structure-books';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo accounts and team from the seed (server/seed/demo.ts).
const teamName = 'Bramblecove Seabed Survey (demo)';
const engineer = { email: 'tomas@bramblecove.test', password: 'harbour-engineer-1' };

describe('decoder cost panel', () => {
  let server: StartedServer;
  let browser: BrowserSession | undefined;
  let teamId: number;
  let treeId: number;
  let ecvqId: number;

  beforeAll(async () => {
    server = await startServer();
    const login = await fetch(`${server.url}/api/auth/login`, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(engineer) });
    const { token } = (await login.json()) as { token: string };
    const auth = { Authorization: `Bearer ${token}`, 'Content-Type': 'application/json' };
    const me = (await (await fetch(`${server.url}/api/me`, { headers: auth })).json()) as { teams: Array<{ id: number; name: string }> };
    teamId = me.teams.find((t) => t.name === teamName)!.id;
    const importBook = async (name: string, body: string) => {
      const res = await fetch(`${server.url}/api/teams/${teamId}/codebooks/import?name=${encodeURIComponent(name)}`, { method: 'POST', headers: auth, body });
      expect(res.status, await res.clone().text()).toBe(201);
      return ((await res.json()) as { codebook: { id: number } }).codebook.id;
    };
    // A comb of depth 3 (7 nodes, leaves at depths 1, 2, 3, 3) over 4 × 4 luma blocks.
    treeId = await importBook('Comb tree', serializeCodebook(structureBook({ color: 'luma', w: 4, h: 4, meanBits: 0, size: 7, structure: { kind: 'tree', balanced: false, children: combChildren(3) } })));
    // Five codewords with code lengths 1, 2, 3, 4, 4 over 2 × 2 luma blocks, means in 4 bits.
    ecvqId = await importBook(
      'Entropy-coded',
      serializeCodebook(structureBook({ color: 'luma', w: 2, h: 2, meanBits: 4, size: 5, structure: { kind: 'entropy-constrained', lambda: 2, codeLengths: Uint8Array.from([1, 2, 3, 4, 4]) } })),
    );
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('shows the tables, the operations per pixel and the longest code on a tree and on an entropy-constrained codebook', async () => {
    browser = await launchBrowser();
    const { page } = browser;
    await page.goto(`${server.url}/sign-in`);
    await page.getByLabel('E-mail').fill(engineer.email);
    await page.getByLabel('Password').fill(engineer.password);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(/\/teams\/\d+/);

    await page.goto(`${server.url}/teams/${teamId}/codebooks/${treeId}`);
    const tree = page.getByRole('region', { name: 'Decoder cost' });
    await tree.waitFor({ timeout: 30_000 });
    // Longest path 3 bits; 2 × 16 multiply-adds a level over 3 levels = 96 a block, 6 a pixel; the C table holds the
    // 4 leaves (4 × 16 uint8 = 64 bytes) and the 3 internal nodes' children (6 int16 = 12 bytes): 76 bytes.
    expect(await page.getByTestId('decoder-cost-max-bits').textContent()).toBe('3');
    const treeText = (await tree.textContent()) ?? '';
    expect(treeText).toContain('blocks vary in length');
    expect(treeText).toMatch(/Firmware, uint8_t\s*76\u2009bytes \(codewords 64, tree 12\)/);
    expect(await tree.getByRole('row', { name: /Encoder multiply-adds/ }).textContent()).toMatch(/Encoder multiply-adds\s*6\s*96/);
    await tree.scrollIntoViewIfNeeded();
    await saveScreenshot(page, 'studio-codebook-decoder-cost-tree');

    await page.goto(`${server.url}/teams/${teamId}/codebooks/${ecvqId}`);
    const ecvq = page.getByRole('region', { name: 'Decoder cost' });
    await ecvq.waitFor({ timeout: 30_000 });
    // Longest Huffman code 4 bits + 4 mean bits = 8 a block; the decoder compares once a code bit: 4 a block, 1 a pixel.
    expect(await page.getByTestId('decoder-cost-max-bits').textContent()).toBe('8');
    expect(await ecvq.textContent()).toContain('(index 4 + mean 4)');
    expect(await ecvq.getByRole('row', { name: /Decoder comparisons/ }).textContent()).toMatch(/Decoder comparisons\s*1\s*4/);
    // Signed residuals in int16 (5 × 4 × 2 = 40 bytes) and int8 (20), each with the code's 20 bytes.
    expect(await ecvq.textContent()).toMatch(/Firmware, int16_t\s*60\u2009bytes/);
    expect(await ecvq.textContent()).toMatch(/Firmware, int8_t\s*40\u2009bytes/);
  });
});
