// Shared helpers of the browser tests: the browser, pages that watch themselves,
// filling forms like a person, reading figures off a page, and comparing them
// with the JSON API.
import assert from 'node:assert/strict';
import { mkdirSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import path from 'node:path';
import { createRequire } from 'node:module';
import { chromium } from 'playwright-core';

const require = createRequire(import.meta.url);

export const BASE = (process.env.RESIDUE_BASE_URL || 'http://127.0.0.1:18640').replace(/\/$/, '');
export const ORIGIN = new URL(BASE).origin;
export const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
export const SCREENSHOTS = path.join(ROOT, 'screenshots');
export const AXE_PATH = require.resolve('axe-core/axe.min.js');
export const TIMEOUT = 5000;

/** The first words of the caution every result page and printout carries. */
export const CAUTION_START = 'Estimates for discussion';

let browserPromise = null;

/** One headless Debian Chromium per test file. */
export function browser() {
  if (!browserPromise) {
    browserPromise = chromium.launch({
      executablePath: process.env.CHROMIUM || '/usr/bin/chromium',
      headless: true,
      args: [
        '--no-sandbox',
        '--disable-gpu',
        '--disable-background-networking',
        '--disable-component-update',
        '--disable-sync',
        '--no-first-run',
        '--disable-quic',
      ],
    });
  }
  return browserPromise;
}

export async function closeBrowser() {
  if (browserPromise) {
    const b = await browserPromise;
    browserPromise = null;
    await b.close();
  }
}

/**
 * A fresh context and page that record what must not happen: a request to any
 * origin but the server's, a console error, an uncaught page error, a CSP
 * violation. `problems()` lists them; `assertClean()` fails with them.
 * `{ javaScriptEnabled: false }` opens the page as a browser without scripts.
 */
export async function openPage(options = {}) {
  const b = await browser();
  const context = await b.newContext({
    viewport: { width: 1280, height: 900 },
    bypassCSP: Boolean(options.bypassCSP),
    javaScriptEnabled: options.javaScriptEnabled !== false,
  });
  context.setDefaultTimeout(TIMEOUT);
  context.setDefaultNavigationTimeout(TIMEOUT);
  const page = await context.newPage();
  const found = [];
  page.on('request', (r) => {
    const url = r.url();
    if (url.startsWith('data:') || url.startsWith('about:') || url.startsWith('blob:')) return;
    let origin;
    try {
      origin = new URL(url).origin;
    } catch {
      origin = url;
    }
    if (origin !== ORIGIN) found.push(`request to another origin: ${url}`);
  });
  page.on('console', (m) => {
    if (m.type() !== 'error') return;
    const at = m.location() && m.location().url ? ` (${m.location().url})` : '';
    // Chromium asks for /favicon.ico on its own, at a moment of its choosing; a 404
    // there is checked once, deterministically, by pages.test.mjs ("an icon").
    if (/\/favicon\.ico$/.test((m.location() && m.location().url) || '')) return;
    // A form page refusing its query answers 400 or 422 on purpose, and Chromium
    // logs the document's own status; the tests check that status themselves.
    // Anything the page loads (a stylesheet, a script) keeps its own address.
    if (/^Failed to load resource: the server responded with a status of 4(00|22) /.test(m.text())
      && m.location() && m.location().url === page.url()) return;
    found.push(`console error on ${page.url()}: ${m.text()}${at}`);
  });
  page.on('pageerror', (e) => found.push(`page error on ${page.url()}: ${e.message}`));
  await page.addInitScript(() => {
    document.addEventListener('securitypolicyviolation', (e) => {
      (window.__cspViolations ||= []).push(`${e.violatedDirective} blocked ${e.blockedURI || '(inline)'}`);
    });
  });
  const cspViolations = async () => {
    try {
      return await page.evaluate(() => window.__cspViolations || []);
    } catch {
      return [];
    }
  };
  return {
    page,
    context,
    problems: () => [...found],
    async assertClean(what = page.url()) {
      // Let late requests (the favicon, a deferred script's fetches) happen first.
      await page.waitForLoadState('networkidle', { timeout: 3000 }).catch(() => {});
      const csp = await cspViolations();
      const all = [...found, ...csp.map((v) => `CSP violation on ${page.url()}: ${v}`)];
      assert.deepEqual(all, [], `${what}: the page must load nothing from outside, log no error and break no CSP rule`);
    },
    close: () => context.close(),
  };
}

/** Goes to a path of the server and answers the response (status checked by the caller). */
export async function visit(page, pathAndQuery) {
  const response = await page.goto(BASE + pathAndQuery, { waitUntil: 'load' });
  assert.ok(response, `no response for ${pathAndQuery}`);
  return response;
}

/** Writes a full-page screenshot into screenshots/ at the repo root. */
export async function screenshot(page, name) {
  mkdirSync(SCREENSHOTS, { recursive: true });
  const file = path.join(SCREENSHOTS, `${name.replace(/[^a-z0-9_-]+/gi, '-')}.png`);
  await page.screenshot({ path: file, fullPage: true });
  return file;
}

/** The JSON answer of an API operation, for the same query as a page. */
export async function api(pathname, query) {
  const url = `${BASE}${pathname}?${new URLSearchParams(query)}`;
  const r = await fetch(url, { headers: { accept: 'application/json' } });
  const body = await r.text();
  assert.equal(r.status, 200, `GET ${url} answered ${r.status}: ${body.slice(0, 400)}`);
  return JSON.parse(body);
}

/** The form that holds a field of this name (the job's form, not a search box). */
export function formWith(page, field) {
  return page.locator('form', { has: page.locator(`[name="${field}"]`) }).first();
}

/**
 * Types into a field as a person would: click, select what is there, type the
 * characters one by one. Selects pick the option whose value or label matches.
 */
export async function typeInto(form, name, text) {
  const field = form.locator(`[name="${name}"]`).first();
  await field.waitFor({ state: 'attached' });
  const tag = await field.evaluate((el) => el.tagName.toLowerCase());
  const type = await field.evaluate((el) => (el.getAttribute('type') || '').toLowerCase());
  if (tag === 'select') {
    const values = await field.evaluate((el) => [...el.options].map((o) => [o.value, o.textContent.trim()]));
    const hit = values.find(([v, l]) => v === String(text) || l === String(text));
    assert.ok(hit, `select ${name} has no option ${text}; it has ${JSON.stringify(values)}`);
    await field.selectOption(hit[0]);
    return;
  }
  if (type === 'radio' || type === 'checkbox') {
    await form.locator(`[name="${name}"][value="${text}"]`).check();
    return;
  }
  if (type === 'hidden') {
    throw new Error(`field ${name} is hidden: a person cannot type into it`);
  }
  await field.click();
  await field.press('ControlOrMeta+a');
  await field.press('Backspace');
  await field.pressSequentially(String(text));
}

/** Submits a form with its submit button and waits until the result page has loaded. */
export async function submit(page, form, expectPath) {
  const button = form.locator('button[type="submit"], input[type="submit"], button:not([type])').first();
  await button.waitFor({ state: 'visible' });
  const before = page.url();
  const [response] = await Promise.all([
    page.waitForResponse((r) => r.request().isNavigationRequest() && r.url() !== before, { timeout: TIMEOUT }),
    button.click(),
  ]);
  await page.waitForLoadState('load');
  const url = new URL(page.url());
  if (expectPath) assert.equal(url.pathname, expectPath, 'the form submits to its own page');
  assert.equal(response.request().method(), 'GET', 'forms submit with GET, so every result has a URL');
  return { response, url };
}

/** A figure as the page writes it, reduced to plain digits: "$1,580.17" → "1580.17", "−5.00" → "-5.00". */
export function plain(text) {
  return String(text)
    .replace(/[\u2212\u2012\u2013]/g, '-')
    .replace(/[\s\u00a0\u202f\u2009,$€£¥]|USD|JPY|EUR|CAD|GBP/g, '')
    .replace(/%$/, '')
    .replace(/^\((.*)\)$/, '-$1');
}

/** "1580.17" → "1,580.17" (how a page is likely to print money). */
export function grouped(value) {
  const s = String(value);
  const neg = s.startsWith('-');
  const [int, frac] = (neg ? s.slice(1) : s).split('.');
  const g = int.replace(/\B(?=(\d{3})+(?!\d))/g, ',');
  return `${neg ? '-' : ''}${g}${frac !== undefined ? `.${frac}` : ''}`;
}

/** Hooks the tests looked for and did not find (reported at the end of each file). */
export const missingHooks = new Set();

/**
 * The elements that carry a figure: `[data-figure="name"]` (preferred), or
 * `#summary-name` / `#name` with underscores as hyphens, inside `scope`.
 */
export function figureLocator(scope, name) {
  const id = name.replace(/_/g, '-');
  return scope.locator(`[data-figure="${name}"], #summary-${id}, #figure-${id}`);
}

/**
 * Checks that the page shows `expected` for figure `name`: through its hook if
 * there is one (exactly, after removing grouping and currency marks), else
 * somewhere in `scope`'s text (written plain or grouped), noting the missing hook.
 */
export async function expectFigure(scope, name, expected, where) {
  if (expected === null || expected === undefined) return;
  const hook = figureLocator(scope, name);
  if ((await hook.count()) > 0) {
    const el = hook.first();
    const raw = await el.getAttribute('data-value');
    const text = (await el.innerText()).trim();
    if (raw !== null) {
      assert.equal(raw, String(expected), `${where}: figure ${name} has data-value="${raw}", the API answers ${expected}`);
    }
    assert.equal(plain(text), plain(String(expected)), `${where}: figure ${name} shows "${text}", the API answers ${expected}`);
    return;
  }
  missingHooks.add(`${where}: [data-figure="${name}"]`);
  // The figures carry their raw value (`<dd data-value="1580.17">1,580.17</dd>`):
  // one of them must be the API's figure, shown as the same number.
  const raws = await scope.locator('[data-value]').evaluateAll((els) =>
    els.map((el) => ({ raw: el.getAttribute('data-value'), text: el.textContent.trim() })));
  const hit = raws.find((r) => r.raw === String(expected));
  if (hit) {
    assert.equal(plain(hit.text).replace(/%$/, ''), plain(String(expected)), `${where}: the figure with data-value="${expected}" reads "${hit.text}"`);
    return;
  }
  const text = await scope.innerText();
  const squeezed = text.replace(/[\u00a0\u202f\u2009]/g, ' ').replace(/\u2212/g, '-');
  const candidates = [String(expected), grouped(expected)];
  assert.ok(
    candidates.some((c) => squeezed.includes(c)),
    `${where}: the page does not show ${name} = ${expected} (looked for ${candidates.join(' or ')})`,
  );
}

/**
 * Checks a rate or percentage shown rounded: the page's number must equal the
 * API's to the precision the page shows (half a unit of its last digit).
 */
export async function expectRate(scope, name, expected, where) {
  if (expected === null || expected === undefined) return;
  const hook = figureLocator(scope, name);
  if ((await hook.count()) === 0) {
    missingHooks.add(`${where}: [data-figure="${name}"]`);
    // Without a hook: some number on the page must round-match.
    const text = (await scope.innerText()).replace(/\u2212/g, '-');
    const raws = await scope.locator('[data-value]').evaluateAll((els) => els.map((el) => el.getAttribute('data-value')));
    const numbers = [...raws, ...(text.match(/-?\d[\d,]*(?:\.\d+)?/g) || [])];
    const ok = numbers.some((n) => roundMatches(n.replace(/,/g, ''), expected));
    assert.ok(ok, `${where}: no number on the page matches ${name} = ${expected} at its shown precision`);
    return;
  }
  const text = (await hook.first().innerText()).trim();
  const shown = plain(text).replace(/%$/, '');
  assert.ok(roundMatches(shown, expected), `${where}: ${name} shows "${text}", the API answers ${expected}`);
}

function roundMatches(shown, expected) {
  if (!/^-?\d+(\.\d+)?$/.test(shown)) return false;
  const decimals = (shown.split('.')[1] || '').length;
  if (decimals < 1 && Math.abs(Number(expected)) < 100) return false; // "6" is not a rate shown
  const half = 0.5 * 10 ** -decimals + 1e-12;
  return Math.abs(Number(shown) - Number(expected)) <= half;
}

/** The result region of a page: a hook if present, else <main>. */
export async function resultScope(page, name = 'summary') {
  const hook = page.locator(`[data-section="${name}"], #${name}, section.${name}, main section.result`).first();
  if ((await hook.count()) > 0) return hook;
  missingHooks.add(`${page.url().split('?')[0].replace(BASE, '')}: #${name} (or data-section="${name}")`);
  return page.locator('main').first();
}

/** The caution must be on the page, visible. */
export async function expectCautionVisible(page, where) {
  // A page carries the caution once on screen and once at the head of a printout;
  // one of them must be visible in the medium shown.
  const caution = page.locator('.caution, [data-caution]').filter({ hasText: CAUTION_START });
  const all = (await caution.count()) > 0 ? caution : page.getByText(CAUTION_START, { exact: false });
  const count = await all.count();
  assert.ok(count > 0, `${where}: the caution ("${CAUTION_START} …") is not on the page`);
  let visible = false;
  for (let i = 0; i < count && !visible; i += 1) visible = await all.nth(i).isVisible();
  assert.ok(visible, `${where}: the caution is on the page but not visible`);
}

/** Follows a CSV link of the page: text/csv, and the expected header row. */
export async function followCsvLink(page, header, where) {
  const link = page.locator('a[href*=".csv"]').first();
  assert.ok((await link.count()) > 0, `${where}: no link to the result as CSV`);
  const href = await link.getAttribute('href');
  const url = new URL(href, page.url());
  assert.equal(url.origin, ORIGIN, `${where}: the CSV link leaves the server: ${url}`);
  const r = await fetch(url);
  const body = await r.text();
  assert.equal(r.status, 200, `${where}: CSV link ${url} answered ${r.status}: ${body.slice(0, 300)}`);
  assert.match(r.headers.get('content-type') || '', /^text\/csv/, `${where}: CSV link content-type`);
  const first = body.split(/\r?\n/)[0];
  assert.equal(first, header, `${where}: CSV header row`);
  return { url, body };
}

/** Follows the JSON link of the page: 200, application/json, and the answer. */
export async function followJsonLink(page, apiPath, where) {
  const links = page.locator(`a[href^="${apiPath}?"], a[href^="${BASE}${apiPath}?"]`);
  assert.ok((await links.count()) > 0, `${where}: no link to the result as JSON (${apiPath}?…)`);
  const url = new URL(await links.first().getAttribute('href'), page.url());
  const r = await fetch(url, { headers: { accept: 'application/json' } });
  const body = await r.text();
  assert.equal(r.status, 200, `${where}: JSON link ${url} answered ${r.status}: ${body.slice(0, 300)}`);
  assert.match(r.headers.get('content-type') || '', /^application\/json/, `${where}: JSON link content-type`);
  return JSON.parse(body);
}

/** Is a page there yet? (pages are being built while these tests are written) */
export async function pageExists(pathname) {
  try {
    const r = await fetch(BASE + pathname);
    return r.status !== 404 && /^text\/html/.test(r.headers.get('content-type') || '');
  } catch {
    return false;
  }
}

/** Prints the hooks that were missing (so the page author can add them). */
export function reportMissingHooks() {
  for (const h of [...missingHooks].sort()) console.log(`missing hook (fell back to page text): ${h}`);
}

/** Runs axe-core in a page opened with bypassCSP (axe is injected as a script). */
export async function axeViolations(page) {
  await page.addScriptTag({ path: AXE_PATH });
  return page.evaluate(async () => {
    // eslint-disable-next-line no-undef
    const r = await axe.run(document, { resultTypes: ['violations'] });
    return r.violations.map((v) => ({
      id: v.id,
      impact: v.impact,
      help: v.help,
      nodes: v.nodes.slice(0, 5).map((n) => ({ target: n.target.join(' '), summary: n.failureSummary })),
      count: v.nodes.length,
    }));
  });
}

/**
 * The schedule rows a page shows: every table row whose first cell is a payment
 * (or period) number, in tables whose header names a balance. Answers
 * [{number, cells: [text…]}] in page order.
 */
export async function scheduleRows(scope) {
  return scope.evaluate((root) => {
    const out = [];
    for (const table of root.querySelectorAll('table')) {
      const head = [...table.querySelectorAll('thead th, tr:first-child th')].map((th) => th.textContent.toLowerCase());
      if (!head.some((h) => h.includes('balance'))) continue;
      for (const tr of table.querySelectorAll('tbody tr')) {
        const cells = [...tr.children].map((c) => c.textContent.replace(/\s+/g, ' ').trim());
        if (/^\d+$/.test(cells[0] || '')) out.push({ number: Number(cells[0]), cells });
      }
    }
    return out;
  });
}
