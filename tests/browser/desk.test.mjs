// Pages a loan officer reads without a glossary, on a phone and at a desk:
//   1. every page (forms, results, worked examples, forms with errors) at
//      390×844 as a phone and at 1366×900: no sideways scroll, no code names
//      (snake_case) in what is read, chart labels at least 11 px, axe clean;
//   2. the check page shows its APR in one format (three decimals, " %"), one
//      number, the unrounded APR only in "How this was worked out";
//   3. extra payments, rate changes and prepaid charges are rows of ordinary
//      fields that round-trip through the address, with and without scripts,
//      and give the figures the JSON API gives for the compact lists;
//   4. the savings form submitted empty says "required" only of empty fields,
//      and no placeholder looks like a value;
//   5. a wrong address under a page is an HTML 404 with a way home; under the
//      API it stays problem JSON;
//   6. the first printed page carries the terms, the date and the caution.
import { test, after } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import {
  BASE, ROOT, TIMEOUT, CAUTION_START, AXE_PATH, browser, closeBrowser, openPage, visit, formWith,
  typeInto, api, expectFigure, resultScope, reportMissingHooks, plain,
} from './lib.mjs';
import { PAGES } from './pages.mjs';

const VIEWPORTS = [
  { name: 'phone', options: { viewport: { width: 390, height: 844 }, deviceScaleFactor: 3, isMobile: true, hasTouch: true } },
  { name: 'desk', options: { viewport: { width: 1366, height: 900 } } },
];

/** Pages whose form computes a result from the address. */
const FORM_PAGES = ['/loan', '/compare', '/check', '/savings', '/refinance', '/options', '/grid'];

const ROWS_QUERY = 'principal=240000&annual_rate_percent=6.25&term_months=360';
const CHECK_CHARGES = '/check?principal=200000&annual_rate_percent=6.5&term_months=360&quoted_payment=1264.14&quoted_apr_percent=6.7&charge_name=Origination&charge_amount=2000&charge_name=Points&charge_amount=1000';

/** Edge inputs: each form page with an error, rows, a long unbroken label. */
const EDGES = [
  { name: 'loan-error', path: '/loan?principal=two+hundred&annual_rate_percent=6.5%25&term_months=360' },
  { name: 'loan-rows', path: `/loan?${ROWS_QUERY}&extra_amount=150&extra_from=13&extra_every=1&extra_until=&extra_amount=5000&extra_from=36&extra_every=&extra_until=&change_from=61&change_rate=7.25` },
  { name: 'loan-row-error', path: `/loan?${ROWS_QUERY}&extra_amount=lots&extra_from=13&change_from=sixty&change_rate=7.25` },
  { name: 'loan-long-label', path: `/loan?principal=96000&annual_rate_percent=9.25&term_months=120&label=${encodeURIComponent('Brannock-and-Yusuf-Joinery-Wexley-Mills-CNC-router-refinance-2026-second-draft')}` },
  { name: 'compare-error', path: '/compare?principal=278000&annual_rate_percent=six&term_months=180,240,360' },
  { name: 'check-error', path: '/check?principal=250000&annual_rate_percent=6.5&term_months=360&quoted_payment=about+1500' },
  { name: 'check-charges', path: CHECK_CHARGES },
  { name: 'savings-error', path: '/savings?deposit=lots&annual_rate_percent=4.5&term_months=120' },
  { name: 'refinance-error', path: '/refinance?current.balance=abc&current.annual_rate_percent=7.25&current.remaining_payments=312&annual_rate_percent=6.125&term_months=360' },
  { name: 'options-error', path: '/options?principal=200000&term_months=360&option_label=A&option_rate_percent=abc&option_points_percent=0&option_other_costs=0&option_label=B&option_rate_percent=6.25&option_points_percent=2&option_other_costs=0' },
  { name: 'grid-error', path: '/grid?principal=abc&rates=6.000..7.500/0.125&terms=360' },
];

/** The worked examples the home page links to (read once, when the file loads). */
async function scenarioPaths() {
  try {
    const html = await (await fetch(`${BASE}/`, { signal: AbortSignal.timeout(TIMEOUT) })).text();
    const main = html.slice(html.indexOf('<main'), html.indexOf('</main>'));
    return [...main.matchAll(/<a\s[^>]*href="([^"]+)"/g)]
      .map((m) => m[1].replace(/&#38;|&amp;/g, '&').replace(/&#34;|&quot;/g, '"'))
      .filter((href) => {
        const u = new URL(href, `${BASE}/`);
        return FORM_PAGES.includes(u.pathname) && u.search.length > 1;
      })
      .map((href) => { const u = new URL(href, `${BASE}/`); return u.pathname + u.search; });
  } catch (e) {
    return { error: String(e) };
  }
}

const scenarios = await scenarioPaths();
const ROUTES = [];
/** One test per page and query, however the query is escaped (180,240 and 180%2C240 are one page). */
const routeKey = (p) => { const u = new URL(p, BASE); return u.pathname + decodeURIComponent(u.search.replace(/\+/g, ' ')); };
const addRoute = (name, p) => { if (!ROUTES.some((r) => routeKey(r.path) === routeKey(p))) ROUTES.push({ name, path: p }); };
for (const p of PAGES) addRoute(p.name, p.path);
addRoute('pipeline-form', '/pipeline');
if (Array.isArray(scenarios)) scenarios.forEach((p, i) => addRoute(`scenario-${i + 1}`, p));
for (const e of EDGES) addRoute(e.name, e.path);

after(async () => {
  reportMissingHooks();
  for (const v of Object.values(shared)) await (await v).context.close().catch(() => {});
  await closeBrowser();
});

// One context and page per viewport, shared by every page of test 1. They
// bypass the CSP so that axe can be injected (pages.test.mjs checks the CSP).
const shared = {};
function viewportPage(vp) {
  shared[vp.name] ||= (async () => {
    const b = await browser();
    const context = await b.newContext({ ...vp.options, bypassCSP: true });
    context.setDefaultTimeout(TIMEOUT);
    context.setDefaultNavigationTimeout(3 * TIMEOUT);
    return { context, page: await context.newPage() };
  })();
  return shared[vp.name];
}

// ---------------------------------------------------------------------------
// In-page checks (run with page.evaluate; they must not close over anything).

/** Sideways scroll: null, or the widths and the elements that stick out. */
function sidewaysScroll() {
  const de = document.documentElement;
  const cw = de.clientWidth;
  if (de.scrollWidth <= cw) return null;
  const name = (el) => {
    let s = el.tagName.toLowerCase();
    if (el.id) s += `#${el.id}`;
    const cls = typeof el.className === 'string' ? el.className.trim() : (el.getAttribute('class') || '');
    if (cls) s += `.${cls.split(/\s+/).join('.')}`;
    const text = (el.textContent || '').replace(/\s+/g, ' ').trim().slice(0, 40);
    return text ? `${s} "${text}"` : s;
  };
  // An element clipped by a scrolling (or clipping) box that itself fits does not
  // widen the page. An absolutely positioned element escapes every such box
  // between it and its containing block (its nearest positioned ancestor).
  const clipped = (el) => {
    let escaping = getComputedStyle(el).position === 'absolute';
    for (let a = el.parentElement; a && a !== document.body && a !== de; a = a.parentElement) {
      const cs = getComputedStyle(a);
      const containing = cs.position !== 'static' || cs.transform !== 'none';
      if (escaping && !containing) continue;
      if (cs.overflowX !== 'visible' && a.getBoundingClientRect().right <= cw + 0.5) return true;
      escaping = cs.position === 'absolute';
    }
    return false;
  };
  const sticking = new Set();
  for (const el of document.body.querySelectorAll('*')) {
    const r = el.getBoundingClientRect();
    if (r.width === 0 || r.right <= cw + 0.5) continue;
    if (getComputedStyle(el).position === 'fixed') continue;
    if (clipped(el)) continue;
    sticking.add(el);
  }
  // Report the outermost element of each run that sticks out (its rows and cells
  // stick out with it), widest first, with the widest of what is inside it.
  const outer = [...sticking].filter((el) => !sticking.has(el.parentElement));
  const byName = new Map();
  for (const el of outer) {
    const r = el.getBoundingClientRect();
    const inner = [...el.querySelectorAll('*')].filter((d) => sticking.has(d));
    // The innermost elements that stick out (no child of theirs does): where the width comes from.
    const leaves = inner.filter((d) => ![...d.children].some((c) => sticking.has(c)))
      .sort((a, b) => b.getBoundingClientRect().right - a.getBoundingClientRect().right);
    const key = name(el);
    const seen = byName.get(key);
    if (seen) { seen.times += 1; continue; }
    byName.set(key, {
      el: key, right: Math.round(r.right), width: Math.round(r.width), inside: inner.length, times: 1,
      leaf: leaves[0] ? `${name(leaves[0])} (right edge ${Math.round(leaves[0].getBoundingClientRect().right)} px)` : '',
    });
  }
  const out = [...byName.values()].sort((a, b) => b.right - a.right || b.width - a.width);
  return { scrollWidth: de.scrollWidth, clientWidth: cw, offenders: out.slice(0, 8), count: sticking.size };
}

/**
 * Code names in what a person reads or hears: visible text (closed <details>
 * counted as opened; visually hidden text included), SVG titles, aria-label and
 * placeholder, and the document title. Skips <code>, <pre>, <kbd>, <samp>,
 * scripts and styles, and form fields' values.
 */
function codeNames() {
  const RE = /\b[a-z]+_[a-z_]+\b/g;
  const SKIP = new Set(['script', 'style', 'noscript', 'template', 'code', 'pre', 'kbd', 'samp', 'textarea']);
  const skipped = (el) => {
    for (let e = el; e; e = e.parentElement) if (SKIP.has(e.tagName.toLowerCase())) return true;
    return false;
  };
  const shown = (el) => {
    const host = el.closest('select') || el;
    if (host.checkVisibility) return host.checkVisibility({ visibilityProperty: true, checkVisibilityCSS: true });
    return host.getClientRects().length > 0;
  };
  const where = (el) => {
    const parts = [];
    for (let e = el; e && e !== document.body && parts.length < 3; e = e.parentElement) {
      const cls = (e.getAttribute('class') || '').trim().split(/\s+/).filter(Boolean).slice(0, 2).map((c) => `.${c}`).join('');
      parts.unshift(e.tagName.toLowerCase() + (e.id ? `#${e.id}` : cls));
      if (e.id) break;
    }
    return parts.join(' > ');
  };
  const closed = [...document.querySelectorAll('details:not([open])')];
  closed.forEach((d) => { d.open = true; });
  const hits = [];
  const note = (kind, el, text) => {
    const found = text.match(RE);
    if (found) hits.push({ kind, where: where(el), names: [...new Set(found)], text: text.replace(/\s+/g, ' ').trim().slice(0, 120) });
  };
  try {
    const walker = document.createTreeWalker(document.body, NodeFilter.SHOW_TEXT);
    for (let n = walker.nextNode(); n; n = walker.nextNode()) {
      const el = n.parentElement;
      if (!el || !RE.test(n.nodeValue)) continue;
      RE.lastIndex = 0;
      const svgTitle = el.closest('svg') && ['title', 'desc'].includes(el.tagName.toLowerCase());
      if (skipped(el)) continue;
      if (svgTitle ? !shown(el.closest('svg')) : !shown(el)) continue;
      note(svgTitle ? 'chart title (read aloud)' : 'text', el, n.nodeValue);
    }
    for (const el of document.body.querySelectorAll('[aria-label], [placeholder], img[alt]')) {
      if (skipped(el) || !shown(el)) continue;
      for (const attr of ['aria-label', 'placeholder', 'alt']) {
        const v = el.getAttribute(attr);
        if (v) note(`${attr} attribute`, el, v);
      }
    }
    const title = document.title.match(RE);
    if (title) hits.push({ kind: 'document title', where: 'title', names: title, text: document.title });
  } finally {
    closed.forEach((d) => { d.open = false; });
  }
  return hits;
}

/** Chart labels: each displayed chart's visible <text>, its size on screen in CSS px. */
function chartLabels() {
  const charts = [];
  for (const svg of document.querySelectorAll('svg')) {
    if (svg.parentElement && svg.parentElement.closest('svg')) continue;
    if (svg.getClientRects().length === 0 || (svg.checkVisibility && !svg.checkVisibility({ visibilityProperty: true }))) continue;
    const box = svg.getBoundingClientRect();
    if (box.width === 0 || box.height === 0) continue;
    const vb = svg.viewBox && svg.viewBox.baseVal;
    let fallback = 1;
    if (vb && vb.width > 0 && vb.height > 0) {
      const sx = box.width / vb.width;
      const sy = box.height / vb.height;
      const par = svg.preserveAspectRatio.baseVal;
      fallback = par.align === 1 /* none */ ? sy : par.meetOrSlice === 2 /* slice */ ? Math.max(sx, sy) : Math.min(sx, sy);
    }
    const labels = [];
    for (const t of svg.querySelectorAll('text')) {
      const words = t.textContent.replace(/\s+/g, ' ').trim();
      if (!words) continue;
      if (t.getClientRects().length === 0 || (t.checkVisibility && !t.checkVisibility({ visibilityProperty: true, opacityProperty: true }))) continue;
      const fontSize = parseFloat(getComputedStyle(t).fontSize);
      const m = t.getScreenCTM();
      const scale = m ? Math.hypot(m.c, m.d) : fallback;
      labels.push({ words: words.slice(0, 40), fontSize, px: Math.round(fontSize * scale * 100) / 100 });
    }
    if (!labels.length) continue;
    const name = svg.getAttribute('aria-label') || (svg.querySelector('title') || {}).textContent || svg.id || svg.getAttribute('class') || 'svg';
    charts.push({ chart: name.trim().slice(0, 60), width: Math.round(box.width), labels });
  }
  return charts;
}

/** axe-core's violations, every impact (the page must have been opened with bypassCSP). */
async function axeAll(page) {
  if (!(await page.evaluate(() => typeof window.axe !== 'undefined'))) await page.addScriptTag({ path: AXE_PATH });
  return page.evaluate(async () => {
    // eslint-disable-next-line no-undef
    const r = await axe.run(document, { resultTypes: ['violations'] });
    return r.violations.map((v) => ({
      id: v.id, impact: v.impact, help: v.help, count: v.nodes.length,
      nodes: v.nodes.slice(0, 4).map((n) => `${n.target.join(' ')}: ${(n.failureSummary || '').replace(/\s+/g, ' ').slice(0, 200)}`),
    }));
  });
}

// ---------------------------------------------------------------------------
// 1. Every page at both viewports.

test('the home page could be read for its worked examples', () => {
  assert.ok(Array.isArray(scenarios), `GET / failed: ${scenarios.error}`);
  assert.ok(scenarios.length > 0, 'the home page links no worked example to a result page');
});

for (const vp of VIEWPORTS) {
  for (const r of ROUTES) {
    test(`${vp.name} ${vp.options.viewport.width}×${vp.options.viewport.height}: ${r.path}`, async (t) => {
      const { page } = await viewportPage(vp);
      const response = await page.goto(BASE + r.path, { waitUntil: 'load' });
      assert.ok(response, `no response for ${r.path}`);
      assert.match(response.headers()['content-type'] || '', /^text\/html/, `${r.path} answers HTML (status ${response.status()})`);
      const where = `${r.path} (${vp.name})`;

      await t.test('a. no sideways scroll', async () => {
        const s = await page.evaluate(sidewaysScroll);
        if (s) {
          const list = s.offenders.map((o) => `  ${o.times > 1 ? `${o.times}× ` : ''}${o.el}: right edge ${o.right} px, width ${o.width} px${o.leaf ? `; innermost: ${o.leaf}` : ''}`).join('\n');
          assert.fail(`${where}: the page scrolls sideways (scrollWidth ${s.scrollWidth} > clientWidth ${s.clientWidth}); ${s.count} element(s) stick out, the farthest first:\n${list}`);
        }
      });

      await t.test('b. no code names (snake_case) outside code', async (st) => {
        if (new URL(BASE + r.path).pathname === '/api') return st.skip('the API guide may show names');
        const hits = await page.evaluate(codeNames);
        const list = hits.slice(0, 15).map((h) => `  ${h.kind} in ${h.where}: ${h.names.join(', ')} — "${h.text}"`).join('\n');
        assert.equal(hits.length, 0, `${where}: ${hits.length} place(s) show a code name instead of words:\n${list}`);
      });

      await t.test('c. chart labels at least 11 px on screen', async () => {
        const charts = await page.evaluate(chartLabels);
        const small = charts
          .map((c) => ({ ...c, small: c.labels.filter((l) => l.px < 10.95) }))
          .filter((c) => c.small.length);
        const list = small.map((c) => {
          const min = Math.min(...c.small.map((l) => l.px));
          const eg = c.small.slice(0, 3).map((l) => `"${l.words}" ${l.px} px (font-size ${l.fontSize})`).join('; ');
          return `  "${c.chart}" (${c.width} px wide): ${c.small.length} of ${c.labels.length} labels under 11 px, smallest ${min} px, e.g. ${eg}`;
        }).join('\n');
        assert.equal(small.length, 0, `${where}: chart labels too small to read:\n${list}`);
      });

      await t.test('d. axe-core: no violations', async () => {
        const violations = await axeAll(page);
        const list = violations.map((v) => `  [${v.impact}] ${v.id}: ${v.help} (${v.count})\n${v.nodes.map((n) => `      ${n}`).join('\n')}`).join('\n');
        assert.equal(violations.length, 0, `${where}: axe-core violations:\n${list}`);
      });
    });
  }
}

// ---------------------------------------------------------------------------
// 2. The check page's APR: one format, one number.

test('check: the APR is shown one way, to three decimals with " %", the unrounded figure only in #derivation', async () => {
  const w = await openPage();
  try {
    const response = await visit(w.page, CHECK_CHARGES);
    assert.equal(response.status(), 200, `${CHECK_CHARGES} answers 200 (the charge rows are read)`);
    const a = await api('/api/v1/loans/check', {
      principal: '200000', annual_rate_percent: '6.5', term_months: '360', quoted_payment: '1264.14',
      quoted_apr_percent: '6.7', prepaid_finance_charges: 'Origination:2000,Points:1000',
    });
    const full = Number(a.apr_percent_full);
    assert.ok(await w.page.locator('#derivation').count() > 0, 'the check has a "How this was worked out" section (#derivation)');
    // The page's text with #derivation left out (as a reader sees it).
    const text = await w.page.evaluate(() => {
      const d = document.getElementById('derivation');
      const before = d ? d.style.getPropertyValue('display') : '';
      if (d) d.style.setProperty('display', 'none', 'important');
      try {
        return document.querySelector('main').innerText;
      } finally {
        if (d) d.style.setProperty('display', before);
      }
    });
    // An APR-like figure: a decimal number that rounds to the computed APR at its shown precision.
    const found = [];
    for (const m of text.matchAll(/(?<![\d.,])(\d+\.\d+)(?![\d])([ \u00a0\u202f]*%)?/g)) {
      const decimals = m[1].split('.')[1].length;
      if (Math.abs(Number(m[1]) - full) > 0.5 * 10 ** -decimals + 1e-12) continue;
      const at = text.slice(Math.max(0, m.index - 50), m.index + m[0].length + 10).replace(/\s+/g, ' ');
      found.push({ shown: m[0], number: m[1], at });
    }
    const list = found.map((f) => `  "${f.shown}" in "…${f.at}…"`).join('\n');
    assert.ok(found.length >= 2, `the APR (${a.apr_percent_full}) is shown in the headline, the figures, the verdict and the table; found it ${found.length} time(s) outside #derivation:\n${list}`);
    const bad = found.filter((f) => !/^\d+\.\d{3}[ \u00a0\u202f]%$/.test(f.shown));
    assert.deepEqual(bad.map((f) => f.shown), [], `every APR outside #derivation reads like "6.646 %" (three decimals, a space, %):\n${list}`);
    const numbers = [...new Set(found.map((f) => f.number))];
    assert.equal(numbers.length, 1, `the APR is one number everywhere outside #derivation, found ${numbers.join(', ')}:\n${list}`);
    const derivation = await w.page.locator('#derivation').innerText();
    assert.ok(/\d+\.\d{4,}/.test(derivation), '#derivation shows the unrounded APR');
    await w.assertClean('/check APR');
  } finally {
    await w.close();
  }
});

// ---------------------------------------------------------------------------
// 3. Rows of ordinary fields, through the address.

const EXTRA_COLS = ['extra_amount', 'extra_from', 'extra_every', 'extra_until'];
const CHANGE_COLS = ['change_from', 'change_rate'];
const CHARGE_COLS = ['charge_name', 'charge_amount'];
const EXTRAS = [['150', '13', '1', ''], ['5000', '36', '', '']];
const CHANGES = [['61', '7.25']];
const COMPACT = { principal: '240000', annual_rate_percent: '6.25', term_months: '360', extra_payments: '150@13-,5000@36', rate_changes: '61:7.25' };
const LOAN_FIGURES = ['payment', 'number_of_payments', 'total_interest', 'total_paid', 'final_payment', 'total_extra', 'interest_saved'];

/** A cell as a value: blank, a number written plainly, or words. */
function cellValue(v) {
  const s = String(v ?? '').trim();
  if (s === '') return '';
  const p = plain(s);
  return /^-?\d+(\.\d+)?$/.test(p) ? String(Number(p)) : s;
}
const filled = (rows) => rows.map((r) => r.map(cellValue)).filter((r) => r.some((v) => v !== ''));

/** The repeatable table that holds inputs of these names. */
function rowTable(page, first) {
  return page.locator('table[data-repeatable]', { has: page.locator(`[name="${first}"]`) }).first();
}

/** The rows a table shows, as the values of its inputs in column order. */
async function shownRows(page, cols) {
  const table = rowTable(page, cols[0]);
  assert.ok(await table.count() > 0, `${page.url()}: no table[data-repeatable] with inputs named ${cols.join(', ')}`);
  return table.evaluate((t, names) => [...t.querySelectorAll('tbody tr')]
    .filter((tr) => tr.querySelector(`[name="${names[0]}"]`))
    .map((tr) => names.map((n) => { const i = tr.querySelector(`[name="${n}"]`); return i ? i.value : null; })), cols);
}

/** The rows an address holds, read by position. */
function urlRows(url, cols) {
  const columns = cols.map((c) => url.searchParams.getAll(c));
  const n = Math.max(...columns.map((c) => c.length));
  return Array.from({ length: n }, (_, i) => columns.map((c) => c[i] ?? ''));
}

/** Opens every closed <details> around an element, as a person would, by its summary. */
async function reveal(locator) {
  for (let i = 0; i < 3; i++) {
    const summary = await locator.evaluate((el) => {
      const d = el.closest('details:not([open])');
      if (!d) return null;
      d.setAttribute('data-desk-reveal', '');
      return true;
    });
    if (!summary) return;
    const page = locator.page();
    await page.locator('details[data-desk-reveal]:not([open]) > summary').first().click();
    await page.evaluate(() => document.querySelectorAll('[data-desk-reveal]').forEach((d) => d.removeAttribute('data-desk-reveal')));
  }
}

/** Types into one field as a person would (click, select all, erase, type). */
async function typeField(field, text) {
  await reveal(field);
  await field.click();
  await field.press('ControlOrMeta+a');
  await field.press('Backspace');
  if (String(text) !== '') await field.pressSequentially(String(text));
}

/** Types rows into a repeatable table, adding rows with its "Add a row" button when needed. */
async function typeRows(page, cols, rows, { canAdd }) {
  const table = rowTable(page, cols[0]);
  assert.ok(await table.count() > 0, `${page.url()}: no table[data-repeatable] with inputs named ${cols.join(', ')}`);
  await reveal(table);
  const trs = table.locator('tbody tr', { has: page.locator(`[name="${cols[0]}"]`) });
  while ((await trs.count()) < rows.length) {
    assert.ok(canAdd, `without scripts the ${cols[0]} table shows ${await trs.count()} blank rows; ${rows.length} are needed`);
    const add = table.locator('xpath=following::button[normalize-space(.)="Add a row"][1]');
    assert.ok(await add.count() > 0, `no "Add a row" button after the ${cols[0]} table`);
    await add.click();
  }
  for (const [i, row] of rows.entries()) {
    for (const [j, value] of row.entries()) {
      if (value === '') continue;
      await typeField(trs.nth(i).locator(`[name="${cols[j]}"]`), value);
    }
  }
}

/** Clicks "Work it out" and waits for the answer page. */
async function workItOut(page, field = 'principal') {
  const form = formWith(page, field);
  const button = form.getByRole('button', { name: 'Work it out' });
  const before = page.url();
  const [response] = await Promise.all([
    page.waitForResponse((r) => r.request().isNavigationRequest() && r.url() !== before, { timeout: TIMEOUT }),
    button.click(),
  ]);
  await page.waitForLoadState('load');
  return { response, url: new URL(page.url()) };
}

async function fillLoan(page, canAdd) {
  const form = formWith(page, 'principal');
  await typeInto(form, 'principal', '240000');
  await typeInto(form, 'annual_rate_percent', '6.25');
  await typeInto(form, 'term_months', '360');
  await typeRows(page, EXTRA_COLS, EXTRAS, { canAdd });
  await typeRows(page, CHANGE_COLS, CHANGES, { canAdd });
}

async function expectLoanFigures(page, answer, where) {
  const scope = await resultScope(page, 'summary');
  for (const key of LOAN_FIGURES) await expectFigure(scope, key, answer.summary[key], where);
}

test('loan rows: typed, submitted, in the address, filled again on reload, the figures of the compact lists', async () => {
  const answer = await api('/api/v1/loans/schedule', COMPACT);
  const w = await openPage();
  try {
    await visit(w.page, '/loan');
    await fillLoan(w.page, true);
    const { response, url } = await workItOut(w.page);
    assert.equal(response.status(), 200, `the loan with rows answers 200 (${url})`);
    assert.equal(url.pathname, '/loan');
    assert.deepEqual(filled(urlRows(url, EXTRA_COLS)), filled(EXTRAS), `the address holds the extra payments as rows: ${url.search}`);
    assert.deepEqual(filled(urlRows(url, CHANGE_COLS)), filled(CHANGES), `the address holds the rate change as a row: ${url.search}`);
    assert.deepEqual(filled(await shownRows(w.page, EXTRA_COLS)), filled(EXTRAS), 'the answer page shows the extra payments typed');
    await expectLoanFigures(w.page, answer, '/loan rows (typed)');

    const again = await visit(w.page, url.pathname + url.search);
    assert.equal(again.status(), 200);
    assert.deepEqual(filled(await shownRows(w.page, EXTRA_COLS)), filled(EXTRAS), 'the address, opened again, shows the same extra payments');
    assert.deepEqual(filled(await shownRows(w.page, CHANGE_COLS)), filled(CHANGES), 'the address, opened again, shows the same rate change');
    await expectLoanFigures(w.page, answer, '/loan rows (reloaded)');
    await w.assertClean('/loan rows');
  } finally {
    await w.close();
  }
});

test('loan rows: an old link in the compact lists opens as filled rows', async () => {
  const answer = await api('/api/v1/loans/schedule', COMPACT);
  const w = await openPage();
  try {
    const r = await visit(w.page, `/loan?${ROWS_QUERY}&extra_payments=150@13-,5000@36&rate_changes=61:7.25`);
    assert.equal(r.status(), 200);
    assert.deepEqual(filled(await shownRows(w.page, EXTRA_COLS)), filled(EXTRAS), 'extra_payments=150@13-,5000@36 shows as two rows');
    assert.deepEqual(filled(await shownRows(w.page, CHANGE_COLS)), filled(CHANGES), 'rate_changes=61:7.25 shows as one row');
    const compactFields = await w.page.locator('form [name="extra_payments"], form [name="rate_changes"]').count();
    assert.equal(compactFields, 0, 'the form has no compact-syntax field left');
    await expectLoanFigures(w.page, answer, '/loan compact link');
    await w.assertClean('/loan compact link');
  } finally {
    await w.close();
  }
});

test('loan rows without JavaScript: blank rows are there, the form submits and computes the same figures', async () => {
  const answer = await api('/api/v1/loans/schedule', COMPACT);
  const w = await openPage({ javaScriptEnabled: false });
  try {
    await visit(w.page, '/loan');
    const extras = await shownRows(w.page, EXTRA_COLS);
    const changes = await shownRows(w.page, CHANGE_COLS);
    assert.ok(extras.length >= 2, `without scripts the form shows at least 2 blank extra-payment rows (shows ${extras.length})`);
    assert.ok(changes.length >= 1, `without scripts the form shows at least 1 blank rate-change row (shows ${changes.length})`);
    assert.equal(await w.page.getByRole('button', { name: 'Add a row' }).count(), 0, 'without scripts there is no "Add a row" button that would do nothing');
    await fillLoan(w.page, false);
    const { response, url } = await workItOut(w.page);
    assert.equal(response.status(), 200, `the form without scripts answers 200 (${url})`);
    assert.deepEqual(filled(urlRows(url, EXTRA_COLS)), filled(EXTRAS), `the address holds the rows: ${url.search}`);
    await expectLoanFigures(w.page, answer, '/loan rows (no JavaScript)');
    await w.assertClean('/loan rows no JS');
  } finally {
    await w.close();
  }
});

test('loan rows with JavaScript: "Add a row" adds a blank row, "Remove" removes one', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/loan');
    const table = rowTable(w.page, 'extra_amount');
    assert.ok(await table.count() > 0, 'the loan form has a table[data-repeatable] of extra payments');
    await reveal(table);
    const trs = table.locator('tbody tr');
    const n = await trs.count();
    assert.equal(await table.getByRole('button', { name: /Remove/ }).count(), n, 'every row has a "Remove" button');
    const add = table.locator('xpath=following::button[normalize-space(.)="Add a row"][1]');
    assert.ok(await add.count() > 0, 'an "Add a row" button follows the table');
    await add.click();
    assert.equal(await trs.count(), n + 1, '"Add a row" adds a row');
    const added = await trs.nth(n).evaluate((tr) => [...tr.querySelectorAll('input')].map((i) => [i.name, i.value]));
    assert.deepEqual(added.map(([name]) => name), EXTRA_COLS, 'the new row has the same fields');
    assert.ok(added.every(([, v]) => v === ''), 'the new row is blank');
    await typeField(trs.nth(0).locator('[name="extra_amount"]'), '150');
    await trs.nth(n).getByRole('button', { name: /Remove/ }).click();
    assert.equal(await trs.count(), n, '"Remove" removes a row');
    assert.equal(await trs.nth(0).locator('[name="extra_amount"]').inputValue(), '150', 'the other rows keep what was typed');
    await w.assertClean('/loan add and remove');
  } finally {
    await w.close();
  }
});

test('check rows: prepaid charges as rows round-trip and give the API\'s figures', async () => {
  const a = await api('/api/v1/loans/check', {
    principal: '200000', annual_rate_percent: '6.5', term_months: '360', quoted_payment: '1264.14',
    quoted_apr_percent: '6.7', prepaid_finance_charges: 'Origination:2000,Points:1000',
  });
  const w = await openPage();
  try {
    const r = await visit(w.page, CHECK_CHARGES);
    assert.equal(r.status(), 200, `${CHECK_CHARGES} answers 200`);
    assert.deepEqual(filled(await shownRows(w.page, CHARGE_COLS)), filled([['Origination', '2000'], ['Points', '1000']]), 'the charges show as rows');
    assert.ok(await rowTable(w.page, 'change_from').count() > 0, 'the check form has rate-change rows too');
    const scope = await resultScope(w.page, 'summary');
    for (const key of ['amount_financed', 'finance_charge', 'total_of_payments']) await expectFigure(scope, key, a[key], '/check charge rows');
    const old = await visit(w.page, '/check?principal=200000&annual_rate_percent=6.5&term_months=360&quoted_payment=1264.14&quoted_apr_percent=6.7&prepaid_finance_charges=Origination:2000,Points:1000');
    assert.equal(old.status(), 200);
    assert.deepEqual(filled(await shownRows(w.page, CHARGE_COLS)), filled([['Origination', '2000'], ['Points', '1000']]), 'an old compact link shows the charges as rows');
    await w.assertClean('/check charge rows');
  } finally {
    await w.close();
  }
});

// ---------------------------------------------------------------------------
// 4. The savings form submitted empty.

async function requiredOnlyWhenEmpty(page, where) {
  const fields = await page.locator('form .field.invalid').evaluateAll((els) => els.map((f) => {
    const input = f.querySelector('input, select, textarea');
    return {
      name: input ? input.name : '(no input)',
      value: input ? input.value : '',
      error: [...f.querySelectorAll('.error')].map((e) => e.textContent.trim()).join(' '),
    };
  }));
  console.log(`${where}: ${fields.length} field(s) marked invalid: ${fields.map((f) => `${f.name} ("${f.error}")`).join('; ') || 'none'}`);
  const wrong = fields.filter((f) => /required/i.test(f.error) && f.value !== '');
  assert.deepEqual(wrong.map((f) => `${f.name} = "${f.value}": ${f.error}`), [], `${where}: a field that holds a value is said to be required`);
}

for (const js of [true, false]) {
  const how = js ? '' : ' (without JavaScript)';
  test(`savings${how}: submitted straight away, "required" is said only of empty fields`, async () => {
    const w = await openPage({ javaScriptEnabled: js });
    try {
      await visit(w.page, '/savings');
      const { response, url } = await workItOut(w.page, 'deposit');
      assert.ok(response.status() < 500, `the empty form answers ${response.status()} (${url})`);
      assert.match(response.headers()['content-type'] || '', /^text\/html/, `the empty form answers its page (${url})`);
      await requiredOnlyWhenEmpty(w.page, `/savings${how} submitted as opened (${url.search || 'no query'})`);
      await w.assertClean(`/savings empty${how}`);
    } finally {
      await w.close();
    }
  });
}

test('savings: every text field cleared and submitted, "required" is said only of empty fields', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/savings');
    const form = formWith(w.page, 'deposit');
    const inputs = form.locator('input:not([type]), input[type="text"], input[type="number"], input[type="search"]');
    for (let i = 0; i < await inputs.count(); i++) {
      const input = inputs.nth(i);
      if (!(await input.isVisible())) await reveal(input);
      if (await input.isVisible()) await typeField(input, '');
    }
    const { response, url } = await workItOut(w.page, 'deposit');
    assert.ok(response.status() < 500, `the cleared form answers ${response.status()} (${url})`);
    assert.match(response.headers()['content-type'] || '', /^text\/html/);
    await requiredOnlyWhenEmpty(w.page, `/savings cleared (${url.search || 'no query'})`);
    await w.assertClean('/savings cleared');
  } finally {
    await w.close();
  }
});

test('savings: no placeholder looks like a value', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/savings');
    const placeholders = await w.page.locator('form [placeholder]').evaluateAll((els) => els.map((el) => [el.name, el.getAttribute('placeholder')]));
    const numeric = placeholders.filter(([, p]) => /^\s*[\d.,]+\s*%?$/.test(p));
    assert.deepEqual(numeric.map(([n, p]) => `${n}: "${p}"`), [], 'a placeholder that reads like a number looks like a value already typed');
  } finally {
    await w.close();
  }
});

// ---------------------------------------------------------------------------
// 5. Not found.

test('a wrong address under a page is an HTML 404 with a link home; under the API, problem JSON', async () => {
  const w = await openPage();
  try {
    for (const p of ['/nope', '/loan/nope', '/check/x', '/savings/extra']) {
      const response = await w.page.goto(BASE + p, { waitUntil: 'load' });
      assert.equal(response.status(), 404, `${p} answers 404`);
      assert.match(response.headers()['content-type'] || '', /^text\/html/, `${p}: a browser gets an HTML page`);
      assert.ok(await w.page.locator('a[href="/"]').count() > 0, `${p}: the page links to "/"`);
      assert.equal(await w.page.locator('h1').count(), 1, `${p}: the page has a heading`);
    }
    const browserAccept = 'text/html,application/xhtml+xml,application/xml;q=0.9,image/avif,image/webp,image/apng,*/*;q=0.8';
    for (const accept of ['application/json', browserAccept]) {
      const r = await fetch(`${BASE}/api/v1/nope`, { headers: { accept } });
      assert.equal(r.status, 404, `/api/v1/nope answers 404 (Accept: ${accept})`);
      assert.match(r.headers.get('content-type') || '', /^application\/problem\+json/, `/api/v1/nope stays problem JSON (Accept: ${accept.slice(0, 20)}…)`);
      await r.text();
    }
  } finally {
    await w.close();
  }
});

// ---------------------------------------------------------------------------
// 6. The printed first page.

const PYTHON = process.env.RESIDUE_PDF_PYTHON || path.join(ROOT, '.venv', 'bin', 'python');
const PDF_TEXT = 'import sys, pypdf\nr = pypdf.PdfReader(sys.argv[1])\nprint(len(r.pages))\nprint(r.pages[0].extract_text())';

test('print: the first page of a loan printout has the terms entered, the date prepared and the caution', async () => {
  assert.ok(existsSync(PYTHON), `${PYTHON} is missing (scripts/test-all makes .venv from tests/crosscheck/requirements.txt)`);
  try {
    execFileSync(PYTHON, ['-c', 'import pypdf'], { stdio: 'pipe' });
  } catch {
    assert.fail(`${PYTHON} cannot import pypdf: add "pypdf==7.1.0" to tests/crosscheck/requirements.txt (and pypdf to the import check in scripts/test-all)`);
  }
  const w = await openPage();
  const dir = mkdtempSync(path.join(os.tmpdir(), 'residue-desk-'));
  try {
    const day = new Date().toISOString().slice(0, 10);
    const r = await visit(w.page, `/loan?${ROWS_QUERY}`);
    assert.equal(r.status(), 200);
    const file = path.join(dir, 'loan.pdf');
    writeFileSync(file, await w.page.pdf({ format: 'A4' }));
    const out = execFileSync(PYTHON, ['-c', PDF_TEXT, file], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] });
    const [pages, ...lines] = out.split('\n');
    const first = lines.join('\n');
    // Letter-spaced or upper-cased headings come out of a PDF as "T E R M S": compare without spaces or case.
    const squeezed = (x) => x.replace(/[\s\u00a0\u202f]+/g, '').toLowerCase();
    const flat = squeezed(first);
    const today = [day, new Date().toISOString().slice(0, 10)];
    const missing = [];
    if (!flat.includes(squeezed('Terms entered'))) missing.push('"Terms entered"');
    if (!flat.includes('240,000')) missing.push('the principal "240,000"');
    if (!today.some((d) => flat.includes(d))) missing.push(`the date prepared (${day}, UTC)`);
    if (!flat.includes(squeezed(CAUTION_START))) missing.push(`the caution ("${CAUTION_START} …")`);
    assert.deepEqual(missing, [], `the first of ${pages} printed pages lacks ${missing.join(', ')}; its text:\n${first.slice(0, 1500)}`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
    await w.close();
  }
});
