/**
 * Debian's Chromium for browser tests, driven by playwright-core. Absent locally, the
 * tests skip with a message; under CI=true they must run.
 */
import { existsSync } from 'node:fs';

export const CHROMIUM = process.env.CHROMIUM_PATH ?? '/usr/bin/chromium';

export function hasChromium(): boolean {
  const ok = existsSync(CHROMIUM);
  if (!ok && process.env.CI === 'true') throw new Error(`Chromium not found at ${CHROMIUM}; .ci/run installs Debian's chromium`);
  if (!ok) console.warn(`skipping browser tests: no Chromium at ${CHROMIUM} (apt-get install chromium)`);
  return ok;
}

export const CHROMIUM_ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--disable-dev-shm-usage',
];
