// A tree and a residual codebook in the browser: the atlas browsed by tree level (leaves framed, populations stated)
// and by residual stage (signed tiles with their scale), and the held-out viewer's level / stage selector with the
// PSNR of every step beside the full reconstruction.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { residualCodebookDocument, treeCodebookDocument } from '../helpers/structure-documents';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo accounts, team and sets from the seed (server/seed/demo.ts, server/seed/demo-content.ts).
const teamName = 'Bramblecove Seabed Survey (demo)';
const engineer = { email: 'tomas@bramblecove.test', password: 'harbour-engineer-1' };
const heldOutSet = 'Survey tiles · held-out';

describe('codebook structure views', () => {
  let server: StartedServer;
  let browser: BrowserSession | undefined;
  let teamId: number;
  let treeId: number;
  let residualId: number;

  beforeAll(async () => {
    server = await startServer();
    const login = await fetch(`${server.url}/api/auth/login`, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(engineer) });
    const { token } = (await login.json()) as { token: string };
    const auth = { Authorization: `Bearer ${token}` };
    const json = { ...auth, 'Content-Type': 'application/json' };
    const me = (await (await fetch(`${server.url}/api/me`, { headers: auth })).json()) as { teams: Array<{ id: number; name: string }> };
    teamId = me.teams.find((t) => t.name === teamName)!.id;
    const { imageSets } = (await (await fetch(`${server.url}/api/teams/${teamId}/image-sets`, { headers: auth })).json()) as { imageSets: Array<{ id: number; name: string }> };
    const heldOutSetId = imageSets.find((s) => s.name === heldOutSet)!.id;
    const importAndEvaluate = async (doc: object) => {
      const imported = await fetch(`${server.url}/api/teams/${teamId}/codebooks/import`, { method: 'POST', headers: json, body: JSON.stringify(doc) });
      expect(imported.status).toBe(201);
      const id = ((await imported.json()) as { codebook: { id: number } }).codebook.id;
      const queued = await fetch(`${server.url}/api/teams/${teamId}/codebooks/${id}/evaluate`, { method: 'POST', headers: json, body: JSON.stringify({ heldOutSetId }) });
      expect(queued.status).toBe(202);
      return id;
    };
    treeId = await importAndEvaluate(treeCodebookDocument());
    residualId = await importAndEvaluate(residualCodebookDocument());
    // The held-out panel lists the images of a codebook's latest evaluation: wait until both have one.
    for (const id of [treeId, residualId]) {
      for (let tries = 0; ; tries++) {
        const { evaluations } = (await (await fetch(`${server.url}/api/teams/${teamId}/codebooks/${id}/evaluations`, { headers: auth })).json()) as { evaluations: unknown[] };
        if (evaluations.length > 0) break;
        if (tries > 240) throw new Error(`codebook ${id} was not evaluated in time`);
        await new Promise((resolve) => setTimeout(resolve, 250));
      }
    }
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  async function signIn() {
    browser = await launchBrowser();
    const { page } = browser;
    await page.goto(`${server.url}/sign-in`);
    await page.getByLabel('E-mail').fill(engineer.email);
    await page.getByLabel('Password').fill(engineer.password);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(/\/teams\/\d+/);
    return page;
  }

  it('browses a tree by level and shows the reconstruction descended only to a chosen level', async () => {
    const page = await signIn();
    await page.goto(`${server.url}/teams/${teamId}/codebooks/${treeId}`);
    const levels = page.getByRole('region', { name: 'Tree levels' });
    const framePixels = () =>
      levels.getByTestId('codeword-atlas').evaluate((canvas: HTMLCanvasElement) => {
        const { data } = canvas.getContext('2d')!.getImageData(0, 0, canvas.width, canvas.height);
        let n = 0;
        for (let i = 0; i < data.length; i += 4) if (data[i] === 0xd8 && data[i + 1] === 0x62 && data[i + 2] === 0x1f) n++;
        return n;
      });
    await levels.getByLabel('Level', { exact: true }).selectOption({ label: 'Level 2: 2 nodes, 2 leaves' });
    // The hand-made tree: nodes 3 and 4 under node 1, 9 of the 14 training vectors reach level 2.
    await expect.poll(() => levels.getByTestId('tree-level-summary').textContent()).toContain('Level 2: 2 nodes, 2 leaves; 9 of 14 training vectors reach it.');
    expect(await levels.getByTestId('codeword-atlas').getAttribute('aria-label')).toMatch(/^Atlas of 2 node codewords of level 2, 4×4 pixels each, .*leaves framed/);
    // Both nodes of level 2 are leaves: each framed in the accent (#d8621f) around its tile; the root (level 0) is not.
    await expect.poll(() => framePixels()).toBeGreaterThan(0);
    await levels.getByLabel('Level', { exact: true }).selectOption({ label: 'Level 0: 1 node' });
    await expect.poll(() => framePixels()).toBe(0);
    await levels.getByLabel('Level', { exact: true }).selectOption({ label: 'Level 1: 2 nodes, 1 leaf' });
    await levels.getByTestId('codeword-atlas').focus();
    await page.keyboard.press('End');
    await expect.poll(() => levels.getByTestId('tree-node').textContent()).toContain('Leaf');

    const viewer = page.getByRole('region', { name: 'Held-out images' });
    const selector = viewer.getByRole('radiogroup', { name: 'Level' });
    await expect.poll(() => selector.getByRole('radio').count(), { timeout: 30_000 }).toBe(3);
    await selector.getByRole('radio', { name: 'Level 0' }).click();
    expect(await selector.getByRole('radio', { name: 'Level 0' }).getAttribute('aria-checked')).toBe('true');
    await expect.poll(() => viewer.getByTestId('step-caption').textContent()).toMatch(/^Level 0: \d+\.\d\d\u2009dB$/);
    const rows = await viewer.getByTestId('step-table').locator('tbody tr').allTextContents();
    expect(rows.map((r) => r.slice(0, 7))).toEqual(['Level 0', 'Level 1', 'Level 2']);
    // The step image is a real decoded PNG, not a broken link.
    await expect.poll(() => viewer.getByTestId('step-image').evaluate((img: HTMLImageElement) => img.complete && img.naturalWidth > 0)).toBe(true);
    await saveScreenshot(page, 'codebook-tree-levels');
  });

  it('shows each residual stage with its scale and the reconstruction after stage 1 and stages 1+2', async () => {
    const page = browser ? browser.page : await signIn();
    await page.goto(`${server.url}/teams/${teamId}/codebooks/${residualId}`);
    const stages = page.getByRole('region', { name: 'Residual stages' });
    await expect.poll(() => stages.getByTestId('residual-stage-scale').textContent()).toBe('Stage 1 is drawn as the blocks it reconstructs on its own.');
    await stages.getByLabel('Stage', { exact: true }).selectOption({ label: 'Stage 2: 4 codewords (2 bits)' });
    await expect
      .poll(() => stages.getByTestId('residual-stage-scale').textContent())
      .toBe('Stage 2 holds signed corrections: mid-grey is 0, white +12.0, black −12.0 (0..255 units).');
    // The ramps' components −12, −4, +4, +12 drawn 128 + 127·v/12 (then rounded by the canvas): 1, 86, 170, 255.
    const greys = () =>
      stages.getByTestId('codeword-atlas').evaluate((canvas: HTMLCanvasElement) => {
        const { data } = canvas.getContext('2d')!.getImageData(0, 0, canvas.width, canvas.height);
        const seen = new Set<number>();
        // Tiles are grey (R = G = B); the gutter is the paper tone (230, 234, 236).
        for (let i = 0; i < data.length; i += 4) if (data[i] === data[i + 1] && data[i] === data[i + 2]) seen.add(data[i]);
        return [...seen].sort((a, b) => a - b);
      });
    await expect.poll(greys).toEqual([1, 86, 170, 255]);

    const viewer = page.getByRole('region', { name: 'Held-out images' });
    const selector = viewer.getByRole('radiogroup', { name: 'Stages' });
    await expect.poll(() => selector.getByRole('radio').allTextContents(), { timeout: 30_000 }).toEqual(['Stage 1', 'Stages 1+2']);
    await selector.getByRole('radio', { name: 'Stages 1+2' }).click();
    await expect.poll(() => viewer.getByTestId('step-caption').textContent()).toMatch(/^Stages 1\+2: \d+\.\d\d\u2009dB$/);
    await expect.poll(() => viewer.getByTestId('step-image').evaluate((img: HTMLImageElement) => img.complete && img.naturalWidth > 0)).toBe(true);
    await saveScreenshot(page, 'codebook-residual-stages');
  });
});
