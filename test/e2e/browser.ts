import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { chromium, type BrowserContext } from 'playwright-core';

export const CHROMIUM_PATH = process.env['TIDEMARK_CHROMIUM'] ?? '/usr/bin/chromium';
export const SCREENSHOT_DIR = path.resolve('test-output/e2e');

/** Launches Debian's Chromium headless; fails with the install command when it is missing (never skips). */
export async function launchChromium(): Promise<{ context: BrowserContext; close: () => Promise<void> }> {
  if (!fs.existsSync(CHROMIUM_PATH)) {
    throw new Error(
      `Chromium was not found at ${CHROMIUM_PATH}. Install it with "apt-get install -y chromium" ` +
        '(or set TIDEMARK_CHROMIUM to its path); the browser suite cannot run without it.',
    );
  }
  const profile = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-chromium-'));
  const context = await chromium.launchPersistentContext(profile, {
    executablePath: CHROMIUM_PATH,
    headless: true,
    viewport: { width: 1366, height: 860 },
    args: [
      '--no-sandbox',
      '--disable-gpu',
      '--disable-quic',
      '--no-first-run',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
    ],
  });
  fs.mkdirSync(SCREENSHOT_DIR, { recursive: true });
  return {
    context,
    close: async () => {
      await context.close();
      fs.rmSync(profile, { recursive: true, force: true });
    },
  };
}
