/**
 * Browser-test plumbing: serve the app with vite on 127.0.0.1 (a production build served by
 * `vite preview`, or the dev server) and drive Debian's chromium through playwright-core.
 */
import { afterAll, beforeAll } from 'vitest';
import fs from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { build, createServer, preview } from 'vite';

export const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
export const CHROMIUM = '/usr/bin/chromium';
export const ARTIFACTS = path.join(ROOT, 'tests/.artifacts');

/** Flags for a quiet, isolated headless run (no sandbox inside containers, no network chatter). */
export const LAUNCH_ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
];

/** Whether the browser suite can run; without chromium it skips, unless CI is set (then it fails). */
export function browserAvailable(): boolean {
  const ok = fs.existsSync(CHROMIUM);
  if (!ok && process.env.CI) throw new Error(`${CHROMIUM} is missing and CI is set: install Debian's chromium (apt-get install chromium) to run the browser tests.`);
  if (!ok) console.warn(`Skipping the browser tests: ${CHROMIUM} is missing (install Debian's chromium to run them).`);
  return ok;
}

export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = net.createServer();
    srv.unref();
    srv.on('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const addr = srv.address();
      srv.close(() => (typeof addr === 'object' && addr ? resolve(addr.port) : reject(new Error('no port'))));
    });
  });
}

export interface Served {
  url: string;
  close(): Promise<void>;
}

/** 'preview' builds the app into a temporary folder and serves it; 'dev' runs the dev server. */
export async function startServer(kind: 'preview' | 'dev' = 'dev'): Promise<Served> {
  const port = await freePort();
  const configFile = path.join(ROOT, 'vite.config.ts');
  if (kind === 'dev') {
    const server = await createServer({ root: ROOT, configFile, logLevel: 'warn', server: { host: '127.0.0.1', port, strictPort: true, hmr: false } });
    await server.listen();
    return { url: `http://127.0.0.1:${port}/`, close: () => server.close() };
  }
  const outDir = fs.mkdtempSync(path.join(os.tmpdir(), 'shimmy-app-'));
  await build({ root: ROOT, configFile, logLevel: 'warn', build: { outDir, emptyOutDir: true } });
  const server = await preview({ root: ROOT, configFile, logLevel: 'warn', build: { outDir }, preview: { host: '127.0.0.1', port, strictPort: true } });
  return {
    url: `http://127.0.0.1:${port}/`,
    async close() {
      await new Promise<void>((r) => server.httpServer.close(() => r()));
      fs.rmSync(outDir, { recursive: true, force: true });
    },
  };
}

export interface Browser {
  context: BrowserContext;
  close(): Promise<void>;
}

export async function launchBrowser(viewport = { width: 1280, height: 800 }): Promise<Browser> {
  const userDataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'shimmy-chromium-'));
  const context = await chromium.launchPersistentContext(userDataDir, {
    executablePath: CHROMIUM,
    headless: true,
    args: LAUNCH_ARGS,
    acceptDownloads: true,
    viewport,
  });
  return {
    context,
    async close() {
      await context.close();
      fs.rmSync(userDataDir, { recursive: true, force: true });
    },
  };
}

/** Where screenshots of a run go (git-ignored). */
export function artifact(name: string): string {
  fs.mkdirSync(ARTIFACTS, { recursive: true });
  return path.join(ARTIFACTS, name);
}

/**
 * Walks the blocks of a GIF file (GIF89a specification, CompuServe 1990): returns the header,
 * the logical screen size, and per image its graphic-control delay (1/100 s) and size.
 */
export function parseGif(buf: Uint8Array): { header: string; width: number; height: number; frames: { delay: number; width: number; height: number }[]; loops: boolean } {
  const header = String.fromCharCode(...buf.slice(0, 6));
  const width = buf[6] | (buf[7] << 8);
  const height = buf[8] | (buf[9] << 8);
  let p = 13;
  const packed = buf[10];
  if (packed & 0x80) p += 3 * (1 << ((packed & 7) + 1));
  const frames: { delay: number; width: number; height: number }[] = [];
  let delay = -1;
  let loops = false;
  const skipSubBlocks = () => {
    while (buf[p] !== 0) p += buf[p] + 1;
    p++;
  };
  while (p < buf.length) {
    const b = buf[p++];
    if (b === 0x3b) break; // trailer
    if (b === 0x21) {
      const label = buf[p++];
      if (label === 0xf9) delay = buf[p + 2] | (buf[p + 3] << 8);
      if (label === 0xff && String.fromCharCode(...buf.slice(p + 1, p + 12)) === 'NETSCAPE2.0') loops = true;
      skipSubBlocks();
    } else if (b === 0x2c) {
      const w = buf[p + 4] | (buf[p + 5] << 8);
      const h = buf[p + 6] | (buf[p + 7] << 8);
      const ipacked = buf[p + 8];
      p += 9;
      if (ipacked & 0x80) p += 3 * (1 << ((ipacked & 7) + 1));
      p++; // LZW minimum code size
      skipSubBlocks();
      frames.push({ delay, width: w, height: h });
      delay = -1;
    } else throw new Error(`unexpected GIF block 0x${b.toString(16)} at byte ${p - 1}`);
  }
  return { header, width, height, frames, loops };
}

/**
 * Serves the built app and launches the browser before a suite's tests, and closes both after:
 * call once inside a describe block and read `.server` and `.browser` in the tests.
 */
export function appSession(): { readonly server: Served; readonly browser: Browser } {
  const session = {} as { server: Served; browser: Browser };
  beforeAll(async () => {
    [session.server, session.browser] = await Promise.all([startServer('preview'), launchBrowser()]);
  }, 60_000);
  afterAll(async () => {
    await session.browser?.close();
    await session.server?.close();
  });
  return session;
}

/**
 * Opens the app at `hash` in a new page of the session's browser and waits for its first
 * result; page errors are collected in `errors`.
 */
export async function open(session: { readonly server: Served; readonly browser: Browser }, hash: string, errors?: string[]): Promise<Page> {
  const page = await session.browser.context.newPage();
  if (errors) page.on('pageerror', (e) => errors.push(e.message));
  await page.goto(session.server.url + hash);
  await page.waitForFunction(() => Number(document.querySelector('[data-testid=results]')?.getAttribute('data-version')) > 0, null, { timeout: 30_000 });
  return page;
}
