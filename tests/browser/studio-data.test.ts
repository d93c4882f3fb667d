import { crc32 } from 'node:zlib';
import sharp from 'sharp';
import type { Page } from 'playwright-core';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { linkToken, waitForMail } from '../helpers/mailbox';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo accounts of the seeded team (server/seed/demo.ts).
const engineer = { email: 'tomas@bramblecove.test', password: 'harbour-engineer-1' };
const viewer = { email: 'juno@bramblecove.test', password: 'harbour-viewer-1' };
const admin = { email: 'ada@bramblecove.test', password: 'harbour-admin-1' };

const setName = 'Breakwater survey, north arm';

/** A 64 × 48 RGB picture of invented "seabed" texture: a gradient with ripples, different for every seed. */
async function seabedPng(seed: number): Promise<Buffer> {
  const width = 64;
  const height = 48;
  const pixels = Buffer.alloc(width * height * 3);
  for (let y = 0; y < height; y += 1) {
    for (let x = 0; x < width; x += 1) {
      const ripple = Math.sin((x + seed * 7) / (3 + seed)) * 40 + Math.cos((y * (seed + 1)) / 5) * 30;
      const i = (y * width + x) * 3;
      pixels[i] = Math.max(0, Math.min(255, 90 + ripple + y));
      pixels[i + 1] = Math.max(0, Math.min(255, 110 + ripple / 2 + x));
      pixels[i + 2] = Math.max(0, Math.min(255, 140 - ripple / 3));
    }
  }
  return sharp(pixels, { raw: { width, height, channels: 3 } }).png().toBuffer();
}

/**
 * A .zip archive with its entries stored uncompressed (method 0), written by the layout of PKWARE's APPNOTE.TXT
 * (local headers, central directory, end record), so the test needs no archiving package.
 */
function storedZip(entries: { name: string; data: Buffer }[]): Buffer {
  const locals: Buffer[] = [];
  const centrals: Buffer[] = [];
  let offset = 0;
  for (const entry of entries) {
    const name = Buffer.from(entry.name, 'utf8');
    const crc = crc32(entry.data);
    const local = Buffer.alloc(30);
    local.writeUInt32LE(0x04034b50, 0);
    local.writeUInt16LE(20, 4);
    local.writeUInt32LE(crc, 14);
    local.writeUInt32LE(entry.data.length, 18);
    local.writeUInt32LE(entry.data.length, 22);
    local.writeUInt16LE(name.length, 26);
    const central = Buffer.alloc(46);
    central.writeUInt32LE(0x02014b50, 0);
    central.writeUInt16LE(20, 4);
    central.writeUInt16LE(20, 6);
    central.writeUInt32LE(crc, 16);
    central.writeUInt32LE(entry.data.length, 20);
    central.writeUInt32LE(entry.data.length, 24);
    central.writeUInt16LE(name.length, 28);
    central.writeUInt32LE(offset, 42);
    locals.push(local, name, entry.data);
    centrals.push(central, name);
    offset += local.length + name.length + entry.data.length;
  }
  const directory = Buffer.concat(centrals);
  const end = Buffer.alloc(22);
  end.writeUInt32LE(0x06054b50, 0);
  end.writeUInt16LE(entries.length, 8);
  end.writeUInt16LE(entries.length, 10);
  end.writeUInt32LE(directory.length, 12);
  end.writeUInt32LE(offset, 16);
  return Buffer.concat([...locals, directory, end]);
}

async function signIn(page: Page, baseUrl: string, account: { email: string; password: string }) {
  await page.goto(`${baseUrl}/sign-in`);
  await page.getByLabel('E-mail').fill(account.email);
  await page.getByLabel('Password').fill(account.password);
  await page.getByRole('button', { name: 'Sign in' }).click();
  await page.waitForURL(/\/teams\/\d+$/);
}

/** The page's buttons by name; used to prove that a read-only role is offered nothing that changes data. */
async function buttonNames(page: Page): Promise<string[]> {
  return page.getByRole('main').getByRole('button').evaluateAll((buttons) => buttons.map((b) => (b.getAttribute('aria-label') ?? b.textContent ?? '').trim()));
}

const mutatingButtons = /create set|choose files|mark training|mark held-out|split set|delete|new run|start run|import|upload/i;

describe('studio data screens in a real browser', () => {
  let server: StartedServer;
  let browser: BrowserSession | undefined;
  let setPath = '';

  beforeAll(async () => {
    server = await startServer();
  });

  afterEach(async () => {
    await browser?.close();
    browser = undefined;
  });

  afterAll(async () => {
    await server?.stop();
  });

  it('lets the engineer create a set, upload images with a corrupt file among them, split it and start a sweep', async () => {
    browser = await launchBrowser({ viewport: { width: 1280, height: 720 } });
    const { page } = browser;
    await signIn(page, server.url, engineer);
    const main = page.getByRole('main');

    await page.getByRole('navigation', { name: 'Team' }).getByRole('link', { name: 'Image sets' }).click();
    await page.waitForURL(/\/image-sets$/);
    // The page arrives as its own chunk after the URL changes: wait for it rather than reading at once.
    await expect.poll(() => main.getByText('Lossy codebooks are not validated for diagnostic medical').isVisible()).toBe(true);

    await main.getByLabel('Name').fill(setName);
    await main.getByLabel('Description').fill('Invented seabed texture tiles from the demo harbour.');
    await main.getByRole('button', { name: 'Create set' }).click();
    await page.waitForURL(/\/image-sets\/\d+$/);
    setPath = new URL(page.url()).pathname;
    await expect.poll(() => main.getByRole('heading', { level: 1 }).textContent()).toBe(setName);

    const tiles = await Promise.all([0, 1, 2, 3].map((seed) => seabedPng(seed)));
    const archived = await Promise.all([4, 5].map((seed) => seabedPng(seed)));
    await main.getByLabel('Files to upload').setInputFiles([
      ...tiles.map((buffer, i) => ({ name: `north-arm-${i + 1}.png`, mimeType: 'image/png', buffer })),
      { name: 'broken-tile.png', mimeType: 'image/png', buffer: Buffer.from('these bytes are not a PNG image at all') },
      {
        name: 'south-pier.zip',
        mimeType: 'application/zip',
        buffer: storedZip(archived.map((data, i) => ({ name: `south-pier-${i + 1}.png`, data }))),
      },
    ]);

    const uploads = main.getByRole('list', { name: 'Uploads' });
    const corruptRow = uploads.getByRole('listitem', { name: 'broken-tile.png', exact: true });
    const zipRow = uploads.getByRole('listitem', { name: 'south-pier.zip', exact: true });
    await expect.poll(() => uploads.getByText(/^Stored/).count(), { timeout: 60_000 }).toBe(5);
    await expect.poll(() => corruptRow.textContent()).toContain('Not stored');
    // The server's own verdict on the corrupt file is shown beside it, naming it.
    const problems = corruptRow.getByRole('list', { name: 'Problems with broken-tile.png' });
    expect(await problems.getByRole('listitem').count()).toBe(1);
    expect(await problems.textContent()).toContain('broken-tile.png');
    expect(await zipRow.textContent()).toContain('2 images');

    // The other six are kept: four files and the two inside the archive.
    const grid = main.getByRole('list', { name: 'Images' });
    await expect.poll(() => grid.getByRole('listitem').count()).toBe(6);
    expect(await grid.getByText('64×48 px', { exact: false }).count()).toBe(6);
    await saveScreenshot(page, 'studio-data-uploaded');

    // A seeded split: round(0.34 · 6) = 2 held-out, the definition the split endpoint documents.
    expect(await main.getByText('Split by share', { exact: true }).count()).toBe(1);
    const split = main.getByRole('form', { name: 'Split into training and held-out' });
    await split.getByLabel('Held-out share (%)').fill('34');
    await split.getByLabel('Seed').fill('7');
    await split.getByRole('button', { name: 'Split set' }).click();
    await expect.poll(() => split.getByRole('status').textContent()).toContain('Split done: 4 training, 2 held-out');
    await main.getByRole('button', { name: /^Held-out/ }).click();
    await expect.poll(() => grid.getByRole('listitem').count()).toBe(2);
    await main.getByRole('button', { name: /^All/ }).click();

    // Multi-select: mark one more held-out, then back to training; the counts follow.
    await main.getByRole('checkbox', { name: 'Select north-arm-1.png' }).check();
    await main.getByRole('button', { name: 'Mark training' }).click();
    await expect.poll(() => main.getByRole('checkbox', { name: 'Select north-arm-1.png' }).isChecked()).toBe(false);
    await saveScreenshot(page, 'studio-data-split');

    await main.getByRole('link', { name: 'New run' }).click();
    await page.waitForURL(/\/runs\/new\?set=\d+$/);
    const form = main.getByRole('form', { name: 'New run' });
    await expect.poll(() => form.isVisible()).toBe(true);
    await expect.poll(() => form.getByText('Lossy codebooks are not validated for diagnostic medical').isVisible()).toBe(true);
    await form.getByLabel('Name', { exact: true }).fill('Luma 4×4 sweep, b 1–4');
    await form.getByRole('button', { name: '4×4' }).click();
    await form.getByText('A range', { exact: true }).click();

    // A budget the training images cannot carry is explained before anything is sent: 4 training images of
    // 64 × 48 give 4 · 16 · 12 = 768 patches of 4 × 4, fewer than 2^12 = 4096 codewords.
    await form.getByLabel('Lowest b').fill('1');
    await form.getByLabel('Highest b').fill('12');
    const problemsBox = form.getByRole('status', { name: 'Problems to fix' });
    await expect.poll(() => problemsBox.textContent()).toContain('4\u202f096 codewords');
    expect(await problemsBox.textContent()).toContain('768 patches of 4×4');
    await saveScreenshot(page, 'studio-data-run-form-invalid');

    await form.getByLabel('Highest b').fill('4');
    await expect.poll(() => problemsBox.count()).toBe(0);
    expect(await form.getByLabel('Run summary').textContent()).toContain('2 … 16 codewords');
    // The summary is sticky beside the form; from the top, the full-page picture shows it where a reader first sees it.
    await page.evaluate(() => window.scrollTo(0, 0));
    await saveScreenshot(page, 'studio-data-run-form');

    await form.getByRole('button', { name: /Start run/ }).click();
    await page.waitForURL(/\/teams\/\d+\/runs\/\d+$/);
    const [, teamId, runId] = /\/teams\/(\d+)\/runs\/(\d+)$/.exec(new URL(page.url()).pathname)!;

    // What the server stored is exactly what the form showed (GET returns the body as posted).
    const answer = await page.request.get(`${server.url}/api/teams/${teamId}/runs/${runId}`);
    expect(answer.status()).toBe(200);
    const { run } = (await answer.json()) as { run: { config: Record<string, unknown>; normalized: { sizes: number[]; trainingImageIds: number[]; heldOutImageIds: number[] } } };
    expect(run.config).toMatchObject({ name: 'Luma 4×4 sweep, b 1–4', patch: { width: 4, height: 4 }, color: 'luma', bits: { from: 1, to: 4 }, init: 'split' });
    expect(run.normalized.sizes).toEqual([2, 4, 8, 16]);
    expect(run.normalized.trainingImageIds).toHaveLength(4);
    expect(run.normalized.heldOutImageIds).toHaveLength(2);
    await saveScreenshot(page, 'studio-data-run-started');
  });

  it('imports a codebook document, names the field of a tampered one, and queues its evaluation', async () => {
    browser = await launchBrowser({ viewport: { width: 1280, height: 720 } });
    const { page } = browser;
    await signIn(page, server.url, engineer);
    const teamId = /\/teams\/(\d+)$/.exec(new URL(page.url()).pathname)![1];

    // A real document: the export of one of the seeded team's trained codebooks.
    const list = (await (await page.request.get(`${server.url}/api/teams/${teamId}/codebooks`)).json()) as { codebooks: { id: number; source: string }[] };
    const trained = list.codebooks.find((c) => c.source === 'trained');
    expect(trained).toBeDefined();
    const exported = await page.request.get(`${server.url}/api/teams/${teamId}/codebooks/${trained!.id}/export`);
    expect(exported.status()).toBe(200);
    const document = (await exported.json()) as { codewords: number[][]; size: number; dimension: number };

    await page.goto(`${server.url}/teams/${teamId}/codebooks/import`);
    const main = page.getByRole('main');
    const form = main.getByRole('form', { name: 'Import codebook' });
    await expect.poll(() => form.isVisible()).toBe(true);
    await expect.poll(() => main.getByText('Lossy codebooks are not validated for diagnostic medical').isVisible()).toBe(true);

    // One changed component no longer matches the SHA-256 checksum; the server names the field.
    const tampered = structuredClone(document);
    tampered.codewords[0][0] += 1;
    await form.getByLabel('Codebook file').setInputFiles({ name: 'tampered.json', mimeType: 'application/json', buffer: Buffer.from(JSON.stringify(tampered)) });
    await expect.poll(() => form.getByRole('status').textContent()).toContain(`${document.size} codewords × ${document.dimension} components`);
    await form.getByRole('button', { name: 'Import codebook' }).click();
    const faults = form.getByRole('list', { name: 'Fields at fault' });
    await expect.poll(() => faults.textContent()).toContain('checksum');
    await saveScreenshot(page, 'studio-data-import-refused');

    await form.getByLabel('Codebook file').setInputFiles({ name: 'harbour.json', mimeType: 'application/json', buffer: Buffer.from(JSON.stringify(document)) });
    await form.getByLabel('Name in this team (optional)').fill('Harbour 4×4, brought back in');
    await form.getByRole('button', { name: 'Import codebook' }).click();
    const opened = main.getByRole('link', { name: 'Open the codebook' });
    await expect.poll(() => opened.isVisible()).toBe(true);
    expect(await opened.getAttribute('href')).toMatch(new RegExp(`^/teams/${teamId}/codebooks/\\d+$`));

    const evaluate = main.getByRole('form', { name: 'Evaluate on a held-out set' });
    await evaluate.getByLabel('Held-out images of').selectOption({ label: `${setName} — 2 held-out images` });
    await evaluate.getByRole('button', { name: 'Evaluate' }).click();
    await expect.poll(() => evaluate.getByRole('status').textContent()).toContain('Evaluation queued on 2 held-out images');
    await saveScreenshot(page, 'studio-data-imported');
  });

  it('asks the admin to confirm a delete and says plainly when a run still uses the set', async () => {
    expect(setPath).not.toBe('');
    browser = await launchBrowser({ viewport: { width: 1280, height: 720 } });
    const { page } = browser;
    await signIn(page, server.url, admin);
    await page.goto(`${server.url}${setPath}`);
    const main = page.getByRole('main');
    await expect.poll(() => main.getByRole('list', { name: 'Images' }).getByRole('listitem').count()).toBe(6);

    await main.getByRole('button', { name: 'Delete set' }).click();
    const dialog = page.getByRole('dialog', { name: 'Delete image set?' });
    await expect.poll(() => dialog.isVisible()).toBe(true);
    await dialog.getByRole('button', { name: 'Delete set' }).click();
    // The sweep started above uses every image of the set, so the server refuses with 409.
    await expect.poll(() => dialog.getByRole('alert').textContent()).toMatch(/^Still in use — .*used by run/);
    await saveScreenshot(page, 'studio-data-delete-refused');
    await dialog.getByRole('button', { name: 'Cancel' }).click();
    await expect.poll(() => dialog.isVisible()).toBe(false);

    await main.getByRole('button', { name: 'Delete north-arm-3.png' }).click();
    const imageDialog = page.getByRole('dialog', { name: 'Delete image?' });
    await imageDialog.getByRole('button', { name: 'Delete image' }).click();
    await expect.poll(() => imageDialog.getByRole('alert').textContent()).toMatch(/^Still in use — /);
    await imageDialog.getByRole('button', { name: 'Cancel' }).click();
    expect(await main.getByRole('list', { name: 'Images' }).getByRole('listitem').count()).toBe(6);
  });

  it('shows a new, empty team its first step: upload a training set', async () => {
    browser = await launchBrowser({ viewport: { width: 1280, height: 720 } });
    const { page } = browser;
    await page.goto(`${server.url}/sign-up`);
    await page.getByLabel('Work e-mail').fill('maren@lanternfish.test');
    await page.getByRole('button', { name: 'Send sign-up link' }).click();
    await expect.poll(() => page.getByRole('status').textContent()).toContain('Check your inbox');
    // The link from the captured mail, as the operator reads it (`npm run mail`).
    const mail = await waitForMail(server.db.knex, 'maren@lanternfish.test', { subject: /finish creating/i });
    await page.goto(linkToken(mail, 'sign-up').url);
    const finish = page.getByRole('form', { name: 'Finish creating your account' });
    await finish.getByLabel('Your name').fill('Maren Quill');
    await finish.getByLabel('Password', { exact: true }).fill('lanternfish-lead-1');
    await finish.getByLabel('Repeat password').fill('lanternfish-lead-1');
    await finish.getByLabel('Team name').fill('Lanternfish Optics');
    await finish.getByRole('button', { name: 'Create team' }).click();
    await page.waitForURL(/\/teams\/\d+$/);
    const main = page.getByRole('main');
    const firstStep = main.getByRole('link', { name: 'Upload a training set' });
    await expect.poll(() => firstStep.isVisible()).toBe(true);
    await expect.poll(() => main.getByText('No image sets yet — upload a training set').isVisible()).toBe(true);
    // Without a set there is nothing to run yet, so the home offers no run.
    expect(await main.getByRole('link', { name: 'New run' }).count()).toBe(0);
    await saveScreenshot(page, 'studio-data-empty-home');
    await firstStep.click();
    await page.waitForURL(/\/image-sets$/);
    await expect.poll(() => main.getByRole('form', { name: 'New image set' }).isVisible()).toBe(true);
  });

  it('offers the viewer nothing that changes data on the team and image-set pages', async () => {
    expect(setPath).not.toBe('');
    browser = await launchBrowser({ viewport: { width: 1280, height: 720 } });
    const { page } = browser;
    await signIn(page, server.url, viewer);
    const main = page.getByRole('main');

    await expect.poll(() => main.getByRole('list', { name: 'Image sets' }).textContent()).toContain(setName);
    expect((await buttonNames(page)).filter((name) => mutatingButtons.test(name))).toEqual([]);
    expect(await main.getByRole('link', { name: /New run|Import codebook|Upload a training set/ }).count()).toBe(0);
    await saveScreenshot(page, 'studio-data-viewer-home');

    await main.getByRole('link', { name: setName }).click();
    await page.waitForURL(/\/image-sets\/\d+$/);
    await expect.poll(() => main.getByRole('list', { name: 'Images' }).getByRole('listitem').count()).toBe(6);
    expect((await buttonNames(page)).filter((name) => mutatingButtons.test(name))).toEqual([]);
    expect(await main.getByRole('checkbox').count()).toBe(0);
    expect(await main.getByLabel('Files to upload').count()).toBe(0);
    await saveScreenshot(page, 'studio-data-viewer-set');

    await page.goto(`${server.url}${setPath.replace(/\/\d+$/, '')}`);
    await expect.poll(() => main.getByRole('table', { name: 'Image sets of this team' }).isVisible()).toBe(true);
    expect((await buttonNames(page)).filter((name) => mutatingButtons.test(name))).toEqual([]);
    expect(await main.getByRole('form', { name: 'New image set' }).count()).toBe(0);
  });
});
