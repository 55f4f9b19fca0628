// The pipeline page: a CSV file of quotes checked row by row. With JavaScript
// the page posts the file to POST /api/v1/loans/checks and shows the verdicts
// as they stream in; without it, the form posts to /pipeline and the server
// renders the same summary and table.
import { test, after } from 'node:test';
import assert from 'node:assert/strict';
import {
  ORIGIN, openPage, visit, typeInto, closeBrowser, reportMissingHooks, screenshot,
} from './lib.mjs';

after(async () => {
  reportMissingHooks();
  await closeBrowser();
});

/** Checking 20,000 rows on a debug build takes seconds, not the usual 5. */
const LONG = 90_000;

const HEADER = 'id,principal,annual_rate_percent,term_months,quoted_payment,quoted_apr_percent';
const ROWS = 20_000;

// 100,000 at 6 % a year over 360 months: P·i/(1 − (1 + i)^−n) with i = 0.005 is
// 599.5505…, so 599.55 holds and 600.55 is a payment one unit over.
const HOLDS = '599.55';
const OFF = '600.55';

/**
 * An invented pipeline of `ROWS` loans, all 100,000 at 6 % over 360 months.
 * `differs` rows quote 600.55; `errors` rows have the principal `abc`. Rows are
 * numbered from 1; row n sits on line n + 1 of the file (the header is line 1).
 */
function pipelineFile() {
  const prefixes = ['PL', 'QT-2026', 'RF/batch7'];
  const differs = Array.from({ length: 37 }, (_, k) => 1 + k * 523);
  const errors = Array.from({ length: 13 }, (_, k) => 250 + k * 1499);
  assert.equal(new Set([...differs, ...errors]).size, differs.length + errors.length, 'planted rows do not overlap');
  const id = (n) => `${prefixes[n % prefixes.length]}-${String(n).padStart(5, '0')}`;
  const lines = [HEADER];
  const d = new Set(differs);
  const e = new Set(errors);
  for (let n = 1; n <= ROWS; n += 1) {
    const principal = e.has(n) ? 'abc' : '100000';
    const quoted = d.has(n) ? OFF : HOLDS;
    lines.push(`${id(n)},${principal},6,360,${quoted},6`);
  }
  return {
    text: `${lines.join('\r\n')}\r\n`,
    differsIds: differs.map(id),
    errorIds: errors.map(id),
    ok: ROWS - differs.length - errors.length,
  };
}

const FILE = pipelineFile();

/** The summary's counts as the page shows them: {rows, ok, differs, error}. */
async function summaryCounts(page) {
  return page.locator('#pipeline-summary dd[data-count]').evaluateAll((dds) =>
    Object.fromEntries(dds.map((dd) => [dd.getAttribute('data-count'), dd.textContent.trim()])));
}

/** The verdict table's rows: class, id, line and the "open" link of each. */
async function tableRows(page) {
  return page.locator('#pipeline-table tbody tr').evaluateAll((trs) => trs.map((tr) => {
    const a = tr.querySelector('a');
    return {
      status: tr.className,
      id: tr.children[0].textContent.trim(),
      line: Number(tr.children[1].textContent.trim()),
      verdict: tr.children[2].textContent.trim(),
      link: a ? { text: a.textContent.trim(), href: a.getAttribute('href') } : null,
    };
  }));
}

/** Every row is opened as a single check on /check, from this server. */
function assertOpenLinks(rows, where) {
  for (const r of rows) {
    assert.ok(r.link, `${where}: row ${r.id} (line ${r.line}) has no "open" link`);
    assert.equal(r.link.text, 'open', `${where}: row ${r.id}'s link reads "open"`);
    const url = new URL(r.link.href, ORIGIN);
    assert.equal(url.origin, ORIGIN, `${where}: row ${r.id}'s link stays on the server`);
    assert.equal(url.pathname, '/check', `${where}: row ${r.id}'s link opens /check: ${r.link.href}`);
  }
}

/** The console errors of a fetch refused on purpose (the 422 of a bad file). */
const refusedFetch = /^console error on .*: Failed to load resource: the server responded with a status of 422 .*\/api\/v1\/loans\/checks\)$/;

/**
 * Clicks "Check every row" with a file chosen, and waits until the page says
 * every row is done, or shows a problem instead (which fails the test with the
 * problem's words and whatever the page logged). Answers the API's response.
 */
async function checkEveryRow(w) {
  let apiResponse = null;
  const seen = (r) => {
    if (new URL(r.url()).pathname === '/api/v1/loans/checks') apiResponse = r;
  };
  w.page.on('response', seen);
  await w.page.getByRole('button', { name: 'Check every row' }).click();
  const done = w.page.locator('#pipeline-count').filter({ hasText: /done/ });
  const alert = w.page.getByRole('alert');
  await done.or(alert).first().waitFor({ timeout: LONG });
  w.page.off('response', seen);
  if (await alert.count()) {
    assert.fail(`the page shows a problem instead of the verdicts: "${(await alert.first().innerText()).replace(/\s+/g, ' ')}"; `
      + `the page logged: ${JSON.stringify(w.problems())}`);
  }
  assert.ok(apiResponse, 'the page posted the file to /api/v1/loans/checks');
  return apiResponse;
}

test('pipeline: 20,000 rows uploaded, checked as they stream, differing rows first', async (t) => {
  const w = await openPage();
  try {
    const first = await visit(w.page, '/pipeline');
    assert.equal(first.status(), 200, '/pipeline answers 200');
    await w.page.locator('#pipeline-file').setInputFiles({
      name: 'pipeline-20000.csv', mimeType: 'text/csv', buffer: Buffer.from(FILE.text, 'utf8'),
    });

    // Watch the progress bar and the result while the verdicts stream in. A
    // MutationObserver sees every change of the bar's value (its oldValue keeps
    // each step, however fast they come), every row added to the table and
    // every summary written, in the order they happen: no sampling interval to
    // miss a step.
    await w.page.evaluate((total) => {
      const watch = { values: [], maxes: [], seq: 0, firstDiffers: null, summaryFinal: null };
      window.__pipelineWatch = watch;
      const bar = document.getElementById('pipeline-progress');
      new MutationObserver((records) => {
        for (const r of records) {
          if (r.attributeName === 'value') watch.values.push(Number(r.oldValue));
          if (r.attributeName === 'max') watch.maxes.push(Number(bar.getAttribute('max')));
        }
      }).observe(bar, { attributes: true, attributeFilter: ['value', 'max'], attributeOldValue: true });
      new MutationObserver((records) => {
        for (const r of records) {
          for (const n of r.addedNodes) {
            watch.seq += 1;
            if (n.nodeType !== 1) continue;
            if (watch.firstDiffers === null && n.matches('tr.differs')) watch.firstDiffers = watch.seq;
            const rows = n.matches('dd[data-count="rows"]') ? n : n.querySelector('dd[data-count="rows"]');
            if (watch.summaryFinal === null && rows && rows.textContent.trim() === String(total)) {
              watch.summaryFinal = watch.seq;
            }
          }
        }
      }).observe(document.getElementById('pipeline-result'), { childList: true, subtree: true });
    }, ROWS);

    const response = await checkEveryRow(w);
    assert.equal(response.status(), 200, 'the API answers the file with 200');
    assert.equal(response.request().method(), 'POST');
    assert.match(response.request().headers().accept || '', /application\/x-ndjson/, 'the page asks for NDJSON');
    assert.equal(response.headers()['residue-rows'], String(ROWS), 'residue-rows counts the file\'s rows');
    assert.match(response.headers()['content-type'] || '', /^application\/x-ndjson/);

    const watch = await w.page.evaluate(() => {
      const bar = document.getElementById('pipeline-progress');
      return { ...window.__pipelineWatch, final: bar.value, max: bar.max };
    });
    assert.equal(watch.max, ROWS, 'the bar\'s max is the residue-rows header');
    assert.equal(watch.final, ROWS, 'the bar ends full');
    const steps = [...watch.values.slice(1), watch.final]; // values[0] is the markup's "0"
    const between = steps.filter((v) => v > 0 && v < ROWS);
    t.diagnostic(`progress values seen: ${steps.length} (${between.length} between 0 and ${ROWS}): ${steps.slice(0, 12).join(', ')}${steps.length > 12 ? ', …' : ''}`);
    for (let i = 1; i < steps.length; i += 1) {
      assert.ok(steps[i] >= steps[i - 1], `the bar never goes back: ${steps[i - 1]} then ${steps[i]}`);
    }
    if (between.length > 0) {
      // The stream was caught mid-way: the bar stood at some count of rows
      // strictly between empty and full before it was full.
      assert.ok(between.length >= 1, 'the bar rises at least once before it is full');
    } else {
      // The whole answer came in one read, so the bar jumped from 0 to full. The
      // page still shows failures as they arrive: the first differing row must
      // have been in the table before the summary said all rows were read.
      t.diagnostic('the stream was too fast for an intermediate value; checking that a differing row came before the final summary');
      assert.ok(watch.firstDiffers !== null, 'a tr.differs row was added to the table');
      assert.ok(watch.summaryFinal !== null, 'the summary came to count every row');
      assert.ok(watch.firstDiffers < watch.summaryFinal,
        `the first differing row (change ${watch.firstDiffers}) appears before the final summary (change ${watch.summaryFinal})`);
    }

    const counts = await summaryCounts(w.page);
    assert.deepEqual(counts, {
      rows: String(ROWS), ok: String(FILE.ok), differs: String(FILE.differsIds.length), error: String(FILE.errorIds.length),
    }, 'the summary counts the planted rows');

    const rows = await tableRows(w.page);
    const nd = FILE.differsIds.length;
    const ne = FILE.errorIds.length;
    assert.equal(rows.length, nd + ne + 500, 'every differing and failing row, and the first 500 that hold');
    assert.deepEqual(rows.slice(0, nd).map((r) => [r.status, r.id]), FILE.differsIds.map((id) => ['differs', id]),
      'the differing rows come first, in file order');
    assert.deepEqual(rows.slice(nd, nd + ne).map((r) => [r.status, r.id]), FILE.errorIds.map((id) => ['error', id]),
      'then the rows not read, in file order');
    assert.ok(rows.slice(nd + ne).every((r) => r.status === 'ok'), 'then rows that hold');
    for (const r of rows) assert.equal(r.verdict, r.status, `row ${r.id}: the verdict cell matches the row's class`);
    assertOpenLinks(rows, '/pipeline (JavaScript)');
    const firstLink = new URL(rows[0].link.href, ORIGIN);
    assert.equal(firstLink.searchParams.get('quoted_payment'), OFF, 'a differing row\'s link carries its quoted payment');
    assert.equal(firstLink.searchParams.get('principal'), '100000');
    const caption = await w.page.locator('#pipeline-table caption').innerText();
    assert.match(caption, new RegExp(`download has all ${ROWS}`), 'the caption says the download has every row');

    await screenshot(w.page, 'pipeline-streamed');
    await w.assertClean('/pipeline (20,000 rows)');

    // The first row's link opens its single check, which agrees: the payment is off.
    await Promise.all([
      w.page.waitForURL((u) => u.pathname === '/check', { timeout: LONG }),
      w.page.locator('#pipeline-table tbody tr').first().getByRole('link', { name: 'open' }).click(),
    ]);
    const text = await w.page.locator('main').innerText();
    assert.ok(text.includes('599.55'), '/check from the first row shows the computed payment 599.55');
    await w.assertClean('/check from a pipeline row');
  } finally {
    await w.close();
  }
});

test('pipeline: "Download the verdicts (CSV)" downloads one verdict a row', async (t) => {
  // Playwright's own download handling: the button submits the form natively
  // (formaction=/api/v1/loans/checks, multipart) and the answer is an attachment.
  const w = await openPage();
  try {
    await visit(w.page, '/pipeline');
    await w.page.locator('#pipeline-file').setInputFiles({
      name: 'pipeline-20000.csv', mimeType: 'text/csv', buffer: Buffer.from(FILE.text, 'utf8'),
    });
    const [download] = await Promise.all([
      w.page.waitForEvent('download', { timeout: LONG }),
      w.page.getByRole('button', { name: 'Download the verdicts (CSV)' }).click(),
    ]);
    assert.equal(download.suggestedFilename(), 'verdicts.csv', 'the download is named verdicts.csv');
    const failure = await download.failure();
    assert.equal(failure, null, `the download completes (${failure})`);
    const chunks = [];
    for await (const c of await download.createReadStream()) chunks.push(c);
    const body = Buffer.concat(chunks).toString('utf8');
    const lines = body.split(/\r?\n/);
    if (lines[lines.length - 1] === '') lines.pop();
    assert.ok(lines[0].startsWith('id,line,status,'), `the header starts id,line,status,: ${lines[0].slice(0, 80)}`);
    assert.equal(lines.length, ROWS + 1, 'the header and one line a row');
    const statuses = lines.slice(1).map((l) => l.split(',')[2]);
    t.diagnostic(`downloaded ${body.length} bytes, ${lines.length} lines`);
    assert.equal(statuses.filter((s) => s === 'differs').length, FILE.differsIds.length, 'the download has every differing row');
    assert.equal(statuses.filter((s) => s === 'error').length, FILE.errorIds.length, 'and every row not read');
    assert.equal(statuses.filter((s) => s === 'ok').length, FILE.ok, 'and every row that holds');
    assert.equal(new URL(w.page.url()).pathname, '/pipeline', 'the page stays where it was');
    await w.assertClean('/pipeline download');
  } finally {
    await w.close();
  }
});

test('pipeline: "Download a template" downloads a CSV with the columns', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/pipeline');
    const [download] = await Promise.all([
      w.page.waitForEvent('download'),
      w.page.getByRole('link', { name: 'Download a template' }).click(),
    ]);
    const chunks = [];
    for await (const c of await download.createReadStream()) chunks.push(c);
    const body = Buffer.concat(chunks).toString('utf8');
    assert.ok(body.split(/\r?\n/)[0].startsWith(`${HEADER},`), `the template's header names the usual columns: ${body.split(/\r?\n/)[0]}`);
    await w.assertClean('/pipeline template');
  } finally {
    await w.close();
  }
});

test('pipeline without JavaScript: pasted rows post to the page, which shows the summary and table', async () => {
  const w = await openPage({ javaScriptEnabled: false });
  try {
    await visit(w.page, '/pipeline');
    const pasted = [
      HEADER,
      'NS-001,100000,6,360,599.55,6',
      'NS-002,100000,6,360,600.55,6',
      'NS-003,abc,6,360,599.55,6',
      'NS-004,240000,6.5,360,1516.96,6.5',
      'NS-005,100000,6,360,,',
    ].join('\n');
    const form = w.page.locator('#pipeline-form');
    await typeInto(form, 'rows', pasted);
    const [response] = await Promise.all([
      w.page.waitForResponse((r) => r.request().isNavigationRequest() && new URL(r.url()).pathname === '/pipeline', { timeout: LONG }),
      w.page.getByRole('button', { name: 'Check every row' }).click(),
    ]);
    await w.page.waitForLoadState('load');
    assert.equal(response.request().method(), 'POST', 'the form posts');
    assert.match(response.request().headers()['content-type'] || '', /^multipart\/form-data/, 'as multipart/form-data');
    assert.equal(response.status(), 200, 'the result page answers 200');
    assert.equal(new URL(w.page.url()).pathname, '/pipeline');
    assert.deepEqual(await summaryCounts(w.page), { rows: '5', ok: '3', differs: '1', error: '1' }, 'the summary counts the pasted rows');
    const rows = await tableRows(w.page);
    assert.deepEqual(rows.map((r) => [r.status, r.id, r.line]), [
      ['differs', 'NS-002', 3],
      ['error', 'NS-003', 4],
      ['ok', 'NS-001', 2],
      ['ok', 'NS-004', 5],
      ['ok', 'NS-005', 6],
    ], 'differing rows first, then rows not read, then rows that hold, each in file order');
    assertOpenLinks(rows, '/pipeline (no JavaScript)');
    const reason = await w.page.locator('#pipeline-table tr.differs td').nth(5).innerText();
    assert.match(reason, /payment over by 1\.00/, `the differing row says why: ${reason}`);
    assert.ok(await w.page.locator('#pipeline-result').isVisible(), 'the result is shown');
    await screenshot(w.page, 'pipeline-nojs');
    await w.assertClean('/pipeline without JavaScript');
  } finally {
    await w.close();
  }
});

const UNKNOWN = 'broker_fee_colour';
const BAD = `id,principal,annual_rate_percent,term_months,${UNKNOWN}\r\nUC-01,100000,6,360,teal\r\n`;

test('pipeline: a file with an unknown column is refused with an alert naming it (JavaScript)', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/pipeline');
    await w.page.locator('#pipeline-file').setInputFiles({
      name: 'unknown-column.csv', mimeType: 'text/csv', buffer: Buffer.from(BAD, 'utf8'),
    });
    let response = null;
    w.page.on('response', (r) => {
      if (new URL(r.url()).pathname === '/api/v1/loans/checks') response = r;
    });
    await w.page.getByRole('button', { name: 'Check every row' }).click();
    const alert = w.page.getByRole('alert');
    await alert.first().waitFor({ state: 'visible' });
    assert.ok(response, `the page posted the file to the API (the page logged: ${JSON.stringify(w.problems())})`);
    assert.equal(response.status(), 422, 'the API refuses the file');
    assert.equal(await alert.count(), 1, 'one alert');
    const text = await alert.innerText();
    assert.ok(text.includes(UNKNOWN), `the alert names the column ${UNKNOWN}: ${text}`);
    assert.equal(await w.page.locator('#pipeline-table').count(), 0, 'no table of verdicts');
    // Chromium logs the refused fetch's 422 as a console error: that one is on purpose.
    await w.page.waitForLoadState('networkidle', { timeout: 3000 }).catch(() => {});
    assert.deepEqual(w.problems().filter((p) => !refusedFetch.test(p)), [], 'nothing else went wrong');
  } finally {
    await w.close();
  }
});

test('pipeline: a file with an unknown column is refused with an alert naming it (no JavaScript)', async () => {
  const w = await openPage({ javaScriptEnabled: false });
  try {
    await visit(w.page, '/pipeline');
    await w.page.locator('#pipeline-file').setInputFiles({
      name: 'unknown-column.csv', mimeType: 'text/csv', buffer: Buffer.from(BAD, 'utf8'),
    });
    const [response] = await Promise.all([
      w.page.waitForResponse((r) => r.request().isNavigationRequest() && new URL(r.url()).pathname === '/pipeline'),
      w.page.getByRole('button', { name: 'Check every row' }).click(),
    ]);
    await w.page.waitForLoadState('load');
    assert.equal(response.status(), 422, 'the page refuses the file with 422');
    const alert = w.page.getByRole('alert');
    assert.equal(await alert.count(), 1, 'one alert');
    assert.ok(await alert.isVisible(), 'the alert is visible');
    const text = await alert.innerText();
    assert.ok(text.includes(UNKNOWN), `the alert names the column ${UNKNOWN}: ${text}`);
    assert.equal(await w.page.locator('#pipeline-table').count(), 0, 'no table of verdicts');
    await w.assertClean('/pipeline unknown column without JavaScript');
  } finally {
    await w.close();
  }
});

/** How far the document scrolls sideways (0 when it does not). */
async function sidewaysScroll(page) {
  return page.evaluate(() => {
    const el = document.scrollingElement || document.documentElement;
    return el.scrollWidth - el.clientWidth;
  });
}

test('pipeline at 390 px: the document does not scroll sideways, before or after the verdicts', async () => {
  const w = await openPage();
  try {
    await w.page.setViewportSize({ width: 390, height: 844 });
    await visit(w.page, '/pipeline');
    assert.equal(await sidewaysScroll(w.page), 0, 'the empty form fits 390 px');
    await w.page.locator('details.columns summary').click();
    assert.equal(await sidewaysScroll(w.page), 0, 'the list of columns, open, fits 390 px');
    await w.page.locator('#pipeline-file').setInputFiles({
      name: 'pipeline-20000.csv', mimeType: 'text/csv', buffer: Buffer.from(FILE.text, 'utf8'),
    });
    await checkEveryRow(w);
    assert.equal(await sidewaysScroll(w.page), 0, 'the summary and the table of verdicts fit 390 px');
    const wrap = await w.page.locator('#pipeline-result .table-wrap').evaluate((el) => ({
      overflowX: getComputedStyle(el).overflowX, width: el.getBoundingClientRect().right,
    }));
    assert.ok(wrap.width <= 390, `the table's wrapper ends within the viewport (at ${wrap.width} px)`);
    assert.ok(['auto', 'scroll'].includes(wrap.overflowX), 'a wide table scrolls inside its wrapper');
    await screenshot(w.page, 'pipeline-390');
    await w.assertClean('/pipeline at 390 px');
  } finally {
    await w.close();
  }
});
