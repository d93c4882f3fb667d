import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium, type BrowserContext, type Page } from 'playwright-core';

/** Debian's chromium package (scripts/ensure-chromium.sh installs it); no browser is ever downloaded. */
export const chromiumPath = '/usr/bin/chromium';

const chromiumArgs = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
];

const screenshotDir = fileURLToPath(new URL('../../test-results/browser/', import.meta.url));

export type BrowserSession = {
  context: BrowserContext;
  page: Page;
  /** Closes the browser and deletes its profile. */
  close(): Promise<void>;
};

/** A browser with a fresh, throw-away profile, so no cookie or storage leaks between tests. */
export async function launchBrowser({ viewport = { width: 1360, height: 860 } } = {}): Promise<BrowserSession> {
  const profileDir = mkdtempSync(path.join(tmpdir(), 'cellwright-chromium-'));
  const context = await chromium.launchPersistentContext(profileDir, {
    executablePath: chromiumPath,
    headless: true,
    args: chromiumArgs,
    viewport,
    locale: 'en-GB',
    timezoneId: 'UTC',
  });
  const page = context.pages()[0] ?? (await context.newPage());
  return {
    context,
    page,
    async close() {
      await context.close();
      rmSync(profileDir, { recursive: true, force: true });
    },
  };
}

/** Saves a full-page screenshot under test-results/browser/ (gitignored) for people to look at. */
export async function saveScreenshot(page: Page, name: string): Promise<string> {
  mkdirSync(screenshotDir, { recursive: true });
  const file = path.join(screenshotDir, `${name}.png`);
  await page.screenshot({ path: file, fullPage: true });
  return file;
}
