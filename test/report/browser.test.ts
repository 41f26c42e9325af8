import { existsSync, mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { explain } from '../../src/alert/explain.js';
import { generateScenario } from '../../src/scenario/index.js';
import type { EpisodeSpan } from '../../src/report/index.js';
import { reportOf } from './make-report.js';

const CHROMIUM = '/usr/bin/chromium';
const HAVE_CHROMIUM = existsSync(CHROMIUM);
const ROOT = fileURLToPath(new URL('../..', import.meta.url));
const ARTIFACTS = join(ROOT, 'test/artifacts');
const BUNDLED = join(ROOT, 'captures/larkspur-demo.pcap');
const MAX_BYTES = 5 * 1024 * 1024;
const MAX_LOAD_MS = 3000;

if (!HAVE_CHROMIUM) console.warn(`test/report/browser.test.ts: skipped, ${CHROMIUM} is absent (apt-get install chromium; .ci/run does)`);

interface Opened { page: Page; errors: string[]; requests: string[]; loadMs: number }

describe.skipIf(!HAVE_CHROMIUM)('the report in headless Chromium', () => {
  let browser: Browser;
  let dir: string;
  const reports: Record<'demo' | 'incident', { file: string; bytes: number; episodes: EpisodeSpan[] }> = {} as never;

  beforeAll(async () => {
    dir = mkdtempSync(join(tmpdir(), 'tidewatch-report-'));
    mkdirSync(ARTIFACTS, { recursive: true });
    const write = async (name: 'demo' | 'incident', data: string, truth: string, title: string) => {
      const r = await reportOf(data, truth, title);
      const file = join(dir, `${name}.html`);
      writeFileSync(file, r.html);
      reports[name] = { file, bytes: Buffer.byteLength(r.html), episodes: r.episodes };
    };
    await write('demo', BUNDLED, BUNDLED.replace(/\.pcap$/, '.truth.json'), 'Larkspur demo capture');
    const six = await generateScenario({ kind: 'incident', seed: 1, outDir: join(dir, 'incident') });
    await write('incident', six.dataFile, six.truthFile, 'Larkspur incident, 6 hours');
    rmSync(join(dir, 'incident'), { recursive: true, force: true });
    // launch() gives every run a fresh temporary profile (user-data dir) of its own
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run',
        '--disable-background-networking', '--disable-component-update', '--disable-sync'],
    });
  }, 120_000);

  afterAll(async () => {
    await browser?.close();
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  async function open(file: string, javaScriptEnabled = true): Promise<Opened> {
    const context = await browser.newContext({ viewport: { width: 1040, height: 1300 }, javaScriptEnabled });
    const page = await context.newPage();
    const errors: string[] = [], requests: string[] = [];
    page.on('console', (m) => { if (m.type() === 'error' || m.type() === 'warning') errors.push(m.text()); });
    page.on('pageerror', (e) => errors.push(e.message));
    page.on('request', (r) => requests.push(r.url()));
    const t = performance.now();
    await page.goto(pathToFileURL(file).href, { waitUntil: 'load' });
    return { page, errors, requests, loadMs: performance.now() - t };
  }

  /** Every alerted host has its section with a drawn chart, and every alert its explanation. */
  async function checkHosts(page: Page, episodes: readonly EpisodeSpan[]): Promise<void> {
    expect(episodes.length).toBeGreaterThan(0);
    for (const host of new Set(episodes.map((e) => e.alert.host))) {
      const section = page.locator('section.host').filter({ has: page.locator(`h2:text-is("${host}")`) });
      await expect.poll(() => section.count()).toBe(1);
      expect(await section.locator('svg.chart polyline.observed').count()).toBeGreaterThan(0);
      const box = await section.locator('svg.chart').first().boundingBox();
      expect(box!.width).toBeGreaterThan(300);
    }
    for (const e of episodes) {
      const text = await page.locator(`article[data-alert-id="${e.alert.id}"] p.explain`).textContent();
      expect(text).toBe(explain(e.alert));
    }
  }

  it('demo capture: each alerted host has its chart and explanation, the page logs no errors and fetches nothing', async () => {
    const r = reports.demo;
    const o = await open(r.file);
    await checkHosts(o.page, r.episodes);
    expect(await o.page.locator('svg.timeline rect.episode').count()).toBe(r.episodes.length);
    expect(o.errors).toEqual([]);
    expect(o.requests).toEqual([pathToFileURL(r.file).href]);
    await o.page.screenshot({ path: join(ARTIFACTS, 'report-demo.png'), fullPage: true });
    // the README's picture (docs/report.png is a copy): timeline down to the first host's explanation
    const top = (await o.page.locator('#timeline').boundingBox())!.y - 8;
    const end = await o.page.locator('section.host').first().locator('p.explain').first().boundingBox();
    await o.page.screenshot({ path: join(ARTIFACTS, 'report-readme.png'), fullPage: true,
      clip: { x: 0, y: top, width: 1040, height: Math.min(1200, end!.y + end!.height + 12 - top) } });
    await o.page.context().close();
  });

  it('demo capture: the same with JavaScript off', async () => {
    const r = reports.demo;
    const o = await open(r.file, false);
    await checkHosts(o.page, r.episodes);
    expect(o.errors).toEqual([]);
    await o.page.context().close();
  });

  it(`6-hour incident scenario: at most 5 MB and loaded in under ${MAX_LOAD_MS} ms`, async () => {
    const r = reports.incident;
    expect(r.bytes).toBeLessThanOrEqual(MAX_BYTES);
    const o = await open(r.file);
    expect(o.loadMs).toBeLessThan(MAX_LOAD_MS);
    await checkHosts(o.page, r.episodes);
    expect(o.errors).toEqual([]);
    await o.page.screenshot({ path: join(ARTIFACTS, 'report-incident.png'), fullPage: true });
    await o.page.context().close();
    console.log(`6-hour report: ${(r.bytes / 1024).toFixed(0)} KiB, ${r.episodes.length} alerts, loaded in ${o.loadMs.toFixed(0)} ms`);
  });
});
