// Shared set-up of the browser tests: paths, a fresh headless Chromium per
// test, a log of every request and every console error, screenshots.

import { chromium } from 'playwright-core';
import { mkdtemp, mkdir, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { spawn } from 'node:child_process';
import assert from 'node:assert/strict';

export const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
export const DIST = process.env.PAIRSIGHT_DIST ?? path.join(ROOT, 'dist');
export const SINGLE_FILE = path.join(DIST, 'pairsight.html');
export const FIXTURES = path.join(ROOT, 'tests/fixtures');
export const ARTIFACTS = process.env.PAIRSIGHT_ARTIFACTS ?? path.join(ROOT, 'artifacts');
const CHROMIUM = process.env.PAIRSIGHT_CHROMIUM ?? '/usr/bin/chromium';

// What headless Chromium needs on these machines: no GPU, no sandbox, and no
// traffic of its own (updates, sync, field trials), so that every request we
// record comes from the page. The profile folder is a fresh temporary one.
export const CHROMIUM_FLAGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
];

/**
 * A seeded generator of numbers in [0, 1) for invented test data: mulberry32,
 * a public-domain 32-bit generator.
 */
export function seededRandom(seed) {
  let s = seed >>> 0;
  return () => {
    s = (s + 0x6d2b79f5) | 0;
    let t = Math.imul(s ^ (s >>> 15), s | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** The fixture file at `name`. */
export const fixture = (name) => path.join(FIXTURES, name);

/**
 * Launch Chromium with a fresh profile for test `t`; closed when the test
 * ends. `log` collects every request URL, console error and page error.
 */
export async function openBrowser(t) {
  const profile = await mkdtemp(path.join(tmpdir(), 'pairsight-e2e-'));
  const context = await chromium.launchPersistentContext(profile, {
    executablePath: CHROMIUM,
    headless: true,
    args: CHROMIUM_FLAGS,
    viewport: { width: 1280, height: 860 },
  });
  t.after(async () => {
    await context.close();
    await rm(profile, { recursive: true, force: true });
  });
  const log = { requests: [], consoleErrors: [], pageErrors: [] };
  context.on('request', (request) => log.requests.push(request.url()));
  const page = context.pages()[0] ?? (await context.newPage());
  const onConsole = (message) => {
    if (message.type() === 'error') log.consoleErrors.push(message.text());
  };
  page.on('console', onConsole);
  page.on('worker', (worker) => worker.on('console', onConsole));
  page.on('pageerror', (error) => log.pageErrors.push(String(error)));
  return { context, page, log };
}

/** A fresh browser on `url`, once the page's engine runs. */
export async function openApp(t, url) {
  const opened = await openBrowser(t);
  await opened.page.goto(url);
  opened.version = await waitForEngine(opened.page);
  return opened;
}

/** Nothing went wrong in the page's scripts or the worker. */
export function assertQuiet(log) {
  assert.deepEqual(log.pageErrors, [], 'uncaught errors in the page');
  assert.deepEqual(log.consoleErrors, [], 'console errors');
}

/** Wait until the engine runs and the header shows its version. */
export async function waitForEngine(page) {
  const version = page.getByTestId('core-version');
  await version.and(page.locator('[data-version]')).waitFor({ timeout: 20_000 });
  return version.getAttribute('data-version');
}

/** Choose a file with the page's file picker and wait for the outcome. */
export async function pickFile(page, file) {
  await page.getByTestId('file-input').setInputFiles(file);
  await settled(page);
}

/** Wait until the data screen shows either a summary or an error. */
export async function settled(page) {
  await page
    .locator('[data-testid="summary"]:not([hidden]), [data-testid="error-banner"]:not([hidden])')
    .first()
    .waitFor({ timeout: 20_000 });
}

/** Save a full-page screenshot to artifacts/<name>.png. */
export async function screenshot(page, name) {
  await mkdir(ARTIFACTS, { recursive: true });
  await page.screenshot({ path: path.join(ARTIFACTS, `${name}.png`), fullPage: true });
}

/** The workspace version, from the root Cargo.toml ([workspace.package]). */
export async function workspaceVersion() {
  const manifest = await readFile(path.join(ROOT, 'Cargo.toml'), 'utf8');
  const section = manifest.split('[workspace.package]')[1] ?? '';
  const match = section.match(/^version\s*=\s*"([^"]+)"/m);
  assert.ok(match, 'Cargo.toml has [workspace.package] version');
  return match[1];
}

/**
 * Start the project's own static server (`xtask serve --port 0`) on dist/
 * and resolve with its base URL; stopped when the test ends.
 */
export async function startServer(t) {
  const xtask = process.env.PAIRSIGHT_XTASK;
  const [cmd, args] = xtask
    ? [xtask, ['serve', '--port', '0']]
    : ['cargo', ['run', '--quiet', '--package', 'xtask', '--', 'serve', '--port', '0']];
  const child = spawn(cmd, args, { cwd: ROOT, stdio: ['ignore', 'pipe', 'inherit'] });
  t.after(() => child.kill('SIGTERM'));
  return new Promise((resolve, reject) => {
    let seen = '';
    const timer = setTimeout(() => reject(new Error(`server did not start; it said: ${seen}`)), 120_000);
    child.stdout.on('data', (chunk) => {
      seen += chunk;
      const match = seen.match(/http:\/\/127\.0\.0\.1:(\d+)\//);
      if (match) {
        clearTimeout(timer);
        resolve(`http://127.0.0.1:${match[1]}/`);
      }
    });
    child.on('exit', (code) => reject(new Error(`server exited (${code}): ${seen}`)));
  });
}

/** Cells of a CSV text (RFC 4180 quoting), row by row. */
export function csvRows(text) {
  const rows = [];
  let row = [];
  let cell = '';
  let quoted = false;
  for (let i = 0; i < text.length; i += 1) {
    const c = text[i];
    if (quoted) {
      if (c === '"' && text[i + 1] === '"') {
        cell += '"';
        i += 1;
      } else if (c === '"') quoted = false;
      else cell += c;
    } else if (c === '"') quoted = true;
    else if (c === ',') {
      row.push(cell);
      cell = '';
    } else if (c === '\n' || c === '\r') {
      if (c === '\r' && text[i + 1] === '\n') i += 1;
      row.push(cell);
      rows.push(row);
      row = [];
      cell = '';
    } else cell += c;
  }
  if (cell !== '' || row.length) {
    row.push(cell);
    rows.push(row);
  }
  return rows;
}

/**
 * Cells a spreadsheet would run as a formula (OWASP, "CSV Injection"): a
 * text cell starting with =, +, @, tab or carriage return, or with - unless
 * it is a number. The rule of the command line's bad-input test.
 */
export function formulaCells(text) {
  return csvRows(text)
    .flat()
    .filter((cell) => {
      const c = cell[0];
      if (c === '=' || c === '+' || c === '@' || c === '\t' || c === '\r') return true;
      return c === '-' && !Number.isFinite(Number(cell));
    });
}
