// The three pages for choosing between loans: /refinance (keep the loan or
// refinance), /options (rate-and-points options) and /grid (the payment at each
// rate and term). Each is used as a loan officer would, read back against its
// API twin (GET /api/v1/refinance, /api/v1/loans/options, /api/v1/loans/grid)
// for the same query, at 390 px and 1366 px, with and without a script.
import { test, after } from 'node:test';
import assert from 'node:assert/strict';
import {
  BASE, openPage, visit, formWith, typeInto, submit, api, expectFigure, expectCautionVisible,
  followJsonLink, axeViolations, closeBrowser, reportMissingHooks, screenshot, plain,
} from './lib.mjs';

after(async () => {
  reportMissingHooks();
  await closeBrowser();
});

/**
 * A page's query as the API reads it: a number typed as a person types it
 * ("187,500", "7.5%") written plainly; every other value as it is.
 */
function plainQuery(url) {
  const out = new URLSearchParams();
  for (const [k, v] of new URL(url).searchParams) {
    const t = v.trim().replace(/\s*%$/, '');
    out.append(k, /^-?\d{1,3}(,\d{3})+(\.\d+)?$|^-?\d+(\.\d+)?$/.test(t) ? t.replace(/,/g, '') : v);
  }
  return out;
}

/** The JSON answer of an API operation for a query given as URLSearchParams (repeated names kept). */
async function apiFor(pathname, params) {
  const url = `${BASE}${pathname}?${params}`;
  const r = await fetch(url, { headers: { accept: 'application/json' } });
  const body = await r.text();
  assert.equal(r.status, 200, `GET ${url} answered ${r.status}: ${body.slice(0, 400)}`);
  return JSON.parse(body);
}

/** Does the document scroll sideways? (scrollWidth over clientWidth, in px; 0 when it fits) */
async function sidewaysOverflow(page) {
  return page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
}

/**
 * Checks a refused form: 422, the page (HTML, not problem JSON), and a message
 * matching `words` next to the field `name` (through its aria-describedby) or
 * in the error summary, visible.
 */
async function expectRefused(page, response, name, words, where) {
  assert.equal(response.status(), 422, `${where}: a refused form answers its page with 422`);
  assert.match(response.headers()['content-type'] || '', /^text\/html/, `${where}: the answer is the page, not problem JSON`);
  const found = await page.evaluate(({ name, source }) => {
    const re = new RegExp(source, 'i');
    const shown = (el) => el && el.getClientRects().length > 0 && getComputedStyle(el).visibility !== 'hidden';
    const out = { field: null, summary: [], invalid: null };
    const input = document.querySelector(`[name="${name}"]`);
    if (input) {
      out.invalid = input.getAttribute('aria-invalid');
      for (const id of (input.getAttribute('aria-describedby') || '').split(/\s+/).filter(Boolean)) {
        const el = document.getElementById(id);
        if (el && re.test(el.textContent) && shown(el)) out.field = el.textContent.trim();
      }
    }
    const summary = document.querySelector('.error-summary, [role="alert"]');
    if (summary && shown(summary)) out.summary = [...summary.querySelectorAll('li')].map((li) => li.textContent.trim());
    return out;
  }, { name, source: words.source });
  assert.ok(found.field || found.summary.some((m) => words.test(m)),
    `${where}: the error (${words}) is shown next to ${name} or in the error summary: ${JSON.stringify(found)}`);
  return found;
}

// ---------------------------------------------------------------- /refinance

const REFINANCE_FIGURES = ['current_payment', 'new_payment', 'monthly_change'];
const REFINANCE_MONTHS = ['break_even_months', 'break_even_months_with_balances'];

/** Checks the refinance result against the API answer `a`. */
async function expectRefinance(page, a, where) {
  const main = page.locator('main');
  for (const key of REFINANCE_FIGURES) await expectFigure(main, key, a[key], where);
  for (const key of REFINANCE_MONTHS) {
    const hook = main.locator(`[data-figure="${key}"]`);
    assert.equal(await hook.count(), 1, `${where}: one [data-figure="${key}"]`);
    const raw = await hook.getAttribute('data-value');
    assert.equal(raw, a[key] === null ? raw : String(a[key]), `${where}: ${key} has data-value="${raw}", the API answers ${a[key]}`);
    if (a[key] !== null) {
      assert.match(await hook.innerText(), new RegExp(`^${a[key]} month`), `${where}: ${key} reads as ${a[key]} months`);
    }
  }
}

test('refinance: the empty form shows its defaults, and "Work it out" gives the figures the API answers', async () => {
  const w = await openPage();
  try {
    const first = await visit(w.page, '/refinance');
    assert.equal(first.status(), 200, '/refinance answers 200');
    assert.match(first.headers()['content-type'] || '', /^text\/html/);
    const form = formWith(w.page, 'current.balance');
    for (const name of ['current.balance', 'current.annual_rate_percent', 'current.remaining_payments', 'annual_rate_percent', 'term_months']) {
      assert.notEqual(await form.locator(`[name="${name}"]`).inputValue(), '', `the empty form fills ${name} with a default`);
    }
    for (const name of ['current.principal', 'current.term_months', 'current.payments_made', 'principal', 'currency',
      'closing_costs', 'points_percent', 'financed_costs', 'cash_out', 'horizon_months']) {
      assert.equal(await form.locator(`[name="${name}"]`).count(), 1, `the form has a field ${name}`);
    }
    assert.equal(await w.page.locator('main [data-figure]').count(), 0, 'the empty form shows no result yet');

    const button = form.getByRole('button', { name: 'Work it out' });
    assert.ok(await button.isVisible(), 'the form has a "Work it out" button');
    const { response, url } = await submit(w.page, form, '/refinance');
    assert.equal(response.status(), 200, `the result answers 200 (${url})`);
    assert.equal(url.searchParams.get('current.balance'), await formWith(w.page, 'current.balance').locator('[name="current.balance"]').inputValue(),
      'the form keeps the balance it submitted');
    assert.equal(url.searchParams.get('cash_out'), null, 'empty fields are left out of the address (with the script)');

    const a = await apiFor('/api/v1/refinance', plainQuery(url));
    await expectRefinance(w.page, a, '/refinance (defaults)');
    const how = w.page.getByRole('region', { name: 'How this was worked out' });
    assert.equal(await how.count(), 1, 'a "How this was worked out" section, named by its heading');
    assert.ok(await how.isVisible(), 'the working is shown');
    assert.ok((await how.locator('li').count()) >= 3, 'the working has its steps');
    assert.ok((await how.innerText()).includes(a.current_payment), 'the working names the current payment');
    await expectCautionVisible(w.page, '/refinance result');
    await screenshot(w.page, 'refinance-defaults');
    await w.assertClean('/refinance defaults');
  } finally {
    await w.close();
  }
});

test('refinance: the current loan as first made (principal, term, payments made) gives what the API answers', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/refinance');
    const form = formWith(w.page, 'current.balance');
    await typeInto(form, 'current.balance', '');
    await typeInto(form, 'current.remaining_payments', '');
    await form.locator('details.more summary', { hasText: 'as first made' }).click();
    await typeInto(form, 'current.principal', '320,000');
    await typeInto(form, 'current.annual_rate_percent', '7.5%');
    await typeInto(form, 'current.term_months', '360');
    await typeInto(form, 'current.payments_made', '41');
    await typeInto(form, 'annual_rate_percent', '6.25');
    await typeInto(form, 'term_months', '300');
    await typeInto(form, 'closing_costs', '4,100');
    await typeInto(form, 'points_percent', '0.5');
    await typeInto(form, 'financed_costs', '2,000');
    await typeInto(form, 'cash_out', '10,000');
    await typeInto(form, 'horizon_months', '96');
    const { response, url } = await submit(w.page, form, '/refinance');
    assert.equal(response.status(), 200, `the result answers 200 (${url})`);
    assert.equal(url.searchParams.get('current.balance'), null, 'the cleared balance is left out of the address');
    const a = await apiFor('/api/v1/refinance', plainQuery(url));
    assert.equal(a.current.payments_made, 41, 'the API read the loan as first made');
    await expectRefinance(w.page, a, '/refinance (as first made)');
    await expectCautionVisible(w.page, '/refinance as first made');
    await w.assertClean('/refinance as first made');
  } finally {
    await w.close();
  }
});

test('refinance: the JSON and CSV links answer the same analysis for the form as typed ("187,500")', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/refinance');
    const { url } = await submit(w.page, formWith(w.page, 'current.balance'), '/refinance');
    assert.match(url.searchParams.get('current.balance') || '', /,/, 'the default balance is typed with a thousands separator');
    const a = await apiFor('/api/v1/refinance', plainQuery(url));
    const linked = await followJsonLink(w.page, '/api/v1/refinance', '/refinance');
    for (const key of [...REFINANCE_FIGURES, ...REFINANCE_MONTHS]) {
      assert.equal(linked[key], a[key], `the JSON link answers the same ${key}`);
    }
    const csv = w.page.locator('main a[href^="/api/v1/refinance.csv?"]');
    assert.equal(await csv.count(), 1, 'a link to the analysis as CSV');
    const r = await fetch(new URL(await csv.getAttribute('href'), BASE));
    assert.equal(r.status, 200, `the CSV link answers ${r.status}: ${(await r.text()).slice(0, 300)}`);
  } finally {
    await w.close();
  }
});

test('refinance: payments made equal to the original term is refused next to the field, with 422', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/refinance');
    const form = formWith(w.page, 'current.balance');
    await typeInto(form, 'current.balance', '');
    await typeInto(form, 'current.remaining_payments', '');
    await form.locator('details.more summary', { hasText: 'as first made' }).click();
    await typeInto(form, 'current.principal', '250000');
    await typeInto(form, 'current.term_months', '360');
    await typeInto(form, 'current.payments_made', '360');
    const { response } = await submit(w.page, form, '/refinance');
    const found = await expectRefused(w.page, response, 'current.payments_made', /payments?.made|paid off/, '/refinance payments made = term');
    assert.equal(found.invalid, 'true', 'the payments-made field is marked invalid');
    const field = formWith(w.page, 'current.balance').locator('[name="current.payments_made"]');
    assert.ok(await field.isVisible(), 'the field in error is shown (its fold is open)');
    assert.equal(await field.inputValue(), '360', 'the form keeps what was typed');
    assert.equal(await w.page.locator('main [data-figure]').count(), 0, 'no result is shown');
    await screenshot(w.page, 'refinance-error');
    await w.assertClean('/refinance error');
  } finally {
    await w.close();
  }
});

// ------------------------------------------------------------------ /options

const ROW_FIELDS = ['option_label', 'option_rate_percent', 'option_points_percent', 'option_other_costs'];

/** The option rows of the form as [[label, rate, points, costs], …] (every row, blank or not). */
async function optionRows(page) {
  return page.locator('table[data-repeatable] tbody tr').evaluateAll((trs, names) =>
    trs.map((tr) => names.map((n) => tr.querySelector(`input[name="${n}"]`).value)), ROW_FIELDS);
}

/** Types the option rows: `rows[i]` into row i + 1; rows not given are cleared. */
async function fillOptionRows(page, rows) {
  const trs = page.locator('table[data-repeatable] tbody tr');
  const n = await trs.count();
  for (let i = 0; i < n; i += 1) {
    for (const [j, name] of ROW_FIELDS.entries()) {
      const input = trs.nth(i).locator(`input[name="${name}"]`);
      const want = rows[i] ? rows[i][j] : '';
      if ((await input.inputValue()) === want) continue;
      await input.click();
      await input.press('ControlOrMeta+a');
      await input.press('Backspace');
      if (want !== '') await input.pressSequentially(want);
    }
  }
}

/** The result table's rows: [{label, payment (data-value), upfront (plain)}]. */
async function optionResults(page) {
  return page.locator('main section.result table').first().evaluate((table) => {
    const heads = [...table.querySelectorAll('thead th')].map((th) => th.textContent.trim());
    const upfront = heads.indexOf('Upfront cost');
    return [...table.querySelectorAll('tbody tr')].map((tr) => {
      const cells = [...tr.children];
      const pay = tr.querySelector('td[data-figure="payment"]');
      return {
        label: cells[0].textContent.trim(),
        payment: pay ? pay.getAttribute('data-value') : null,
        paymentText: pay ? pay.textContent.trim() : null,
        upfront: upfront >= 0 ? cells[upfront].textContent.trim() : null,
      };
    });
  });
}

/** Checks the shown options against the API answer `a`: labels, payments, upfront costs. */
async function expectOptions(page, a, where) {
  const shown = await optionResults(page);
  assert.deepEqual(shown.map((o) => o.label), a.options.map((o) => o.label), `${where}: the options shown are the API's, in order`);
  for (const [i, o] of a.options.entries()) {
    assert.equal(shown[i].payment, o.payment, `${where}: option ${i + 1} (${o.label}) td[data-figure=payment] data-value, the API answers ${o.payment}`);
    assert.equal(plain(shown[i].paymentText), o.payment, `${where}: option ${i + 1} shows its payment ${o.payment}`);
    assert.equal(plain(shown[i].upfront), o.upfront_cost, `${where}: option ${i + 1} (${o.label}) upfront cost shows "${shown[i].upfront}", the API answers ${o.upfront_cost}`);
  }
}

const TWO_OPTIONS = [
  ['Par', '6.875', '0', '0'],
  ['Buy-down', '6.375', '1.75', '650'],
];

test('options: two options typed, the rest blank; the address drops the blank rows and round-trips; payments match the API', async () => {
  const w = await openPage();
  try {
    const first = await visit(w.page, '/options');
    assert.equal(first.status(), 200, '/options answers 200');
    const table = w.page.locator('table[data-repeatable]');
    assert.equal(await table.count(), 1, 'one table[data-repeatable] of option rows');
    const before = await optionRows(w.page);
    assert.equal(before.length, 6, 'six option rows');
    assert.equal(before.filter((r) => r.some((v) => v !== '')).length, 3, 'three of them filled by default');

    const form = formWith(w.page, 'principal');
    await typeInto(form, 'principal', '240000');
    await typeInto(form, 'term_months', '360');
    await fillOptionRows(w.page, TWO_OPTIONS);
    const { response, url } = await submit(w.page, form, '/options');
    assert.equal(response.status(), 200, `the options answer 200 (${url})`);
    for (const name of ROW_FIELDS) {
      assert.deepEqual(url.searchParams.getAll(name), TWO_OPTIONS.map((r) => r[ROW_FIELDS.indexOf(name)]),
        `the address holds ${name} of the two options, in order, and nothing of the blank rows`);
    }
    assert.equal(url.searchParams.get('currency'), null, 'an empty field is left out of the address');

    const a = await apiFor('/api/v1/loans/options', url.searchParams);
    assert.equal(a.options.length, 2);
    await expectOptions(w.page, a, '/options (two typed)');
    await expectCautionVisible(w.page, '/options result');
    const rowsAfter = await optionRows(w.page);
    assert.deepEqual(rowsAfter.slice(0, 2), TWO_OPTIONS, 'the result page keeps the two options in the first rows');
    assert.ok(rowsAfter.slice(2).every((r) => r.every((v) => v === '')), 'and the other rows blank');

    // The address round-trips: opened afresh, it shows the same rows and result.
    const again = await visit(w.page, `${url.pathname}${url.search}`);
    assert.equal(again.status(), 200);
    assert.deepEqual(await optionRows(w.page), rowsAfter, 'reloading the address shows the same values in the rows');
    await expectOptions(w.page, a, '/options (reloaded)');

    const linked = await followJsonLink(w.page, '/api/v1/loans/options', '/options');
    assert.deepEqual(linked.options.map((o) => o.payment), a.options.map((o) => o.payment), 'the JSON link answers the same payments');
    await screenshot(w.page, 'options-two');
    await w.assertClean('/options two options');
  } finally {
    await w.close();
  }
});

test('options without JavaScript: the form still works, blank rows and all', async () => {
  const w = await openPage({ javaScriptEnabled: false });
  try {
    await visit(w.page, '/options');
    const form = formWith(w.page, 'principal');
    await typeInto(form, 'principal', '240000');
    await fillOptionRows(w.page, TWO_OPTIONS);
    const { response, url } = await submit(w.page, form, '/options');
    assert.equal(response.status(), 200, `the options answer 200 without a script (${url})`);
    assert.equal(url.searchParams.getAll('option_label').length, 6, 'without the script every row is sent, blank ones too');
    const a = await apiFor('/api/v1/loans/options', url.searchParams);
    assert.equal(a.options.length, 2, 'the API reads the same address as two options');
    await expectOptions(w.page, a, '/options (no JavaScript)');
    await expectCautionVisible(w.page, '/options without JavaScript');
    const rows = await optionRows(w.page);
    assert.deepEqual(rows.slice(0, 2), TWO_OPTIONS, 'the two options are kept in their rows');
    await screenshot(w.page, 'options-nojs');
    await w.assertClean('/options without JavaScript');
  } finally {
    await w.close();
  }
});

test('options: a row with its costs blank before a row with costs keeps its position', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/options');
    const form = formWith(w.page, 'principal');
    await typeInto(form, 'principal', '200000');
    const rows = [
      ['No costs typed', '6.75', '0', ''],
      ['Points and fees', '6.5', '1', '750'],
    ];
    await fillOptionRows(w.page, rows);
    const { response, url } = await submit(w.page, form, '/options');
    assert.equal(response.status(), 200, `the options answer 200 (${url})`);
    assert.deepEqual(url.searchParams.getAll('option_other_costs'), ['', '750'],
      'a row that is not blank is sent whole, its blank cost included, so positions hold');
    const a = await apiFor('/api/v1/loans/options', url.searchParams);
    assert.deepEqual(a.options.map((o) => o.other_costs), ['0.00', '750.00'], 'the API gives the 750 to the second option, not the first');
    assert.deepEqual(a.options.map((o) => o.upfront_cost), ['0.00', '2750.00']);
    await expectOptions(w.page, a, '/options (a blank cost, then a cost)');
    assert.deepEqual((await optionRows(w.page)).slice(0, 2), rows, 'the form shows each cost in its own row');
    const linked = await followJsonLink(w.page, '/api/v1/loans/options', '/options');
    assert.deepEqual(linked.options.map((o) => o.other_costs), ['0.00', '750.00'], 'the JSON link keeps the positions too');
    await w.assertClean('/options blank cost');
  } finally {
    await w.close();
  }
});

test('options: a single option is refused in the error summary, with 422', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/options');
    const form = formWith(w.page, 'principal');
    await fillOptionRows(w.page, [['Only one', '6.5', '0', '0']]);
    const { response, url } = await submit(w.page, form, '/options');
    assert.equal(url.searchParams.getAll('option_label').length, 1, 'one option sent');
    await expectRefused(w.page, response, 'option_rate_percent', /2 to 6 options|two to six/i, '/options one option');
    assert.equal(await w.page.locator('main td[data-figure="payment"]').count(), 0, 'no result is shown');
    assert.deepEqual((await optionRows(w.page))[0], ['Only one', '6.5', '0', '0'], 'the form keeps the option typed');
    await screenshot(w.page, 'options-error');
    await w.assertClean('/options error');
  } finally {
    await w.close();
  }
});

// --------------------------------------------------------------------- /grid

/** The grid's cells: [{table, rate, term, principal, value, text, href}] from each cell's /loan link. */
async function gridCells(page) {
  return page.locator('table.payment-grid').evaluateAll((tables) => tables.flatMap((t, ti) =>
    [...t.querySelectorAll('tbody td')].map((td) => {
      const a = td.querySelector('a[href]');
      const u = new URL(a.href);
      return {
        table: ti,
        row: td.parentElement.rowIndex,
        col: td.cellIndex,
        principal: u.searchParams.get('principal'),
        rate: u.searchParams.get('annual_rate_percent'),
        term: u.searchParams.get('term_months'),
        path: u.pathname,
        value: a.getAttribute('data-value'),
        figure: a.getAttribute('data-figure'),
        text: a.textContent.trim(),
      };
    })));
}

const DEFAULT_GRID = { principal: '300000', rates: '6.000..7.500/0.125', terms: '120,180,240,300,360' };

test('grid: the default grid (13 rates × 5 terms) shows in every cell the payment the API answers', async () => {
  const w = await openPage();
  try {
    const first = await visit(w.page, '/grid');
    assert.equal(first.status(), 200, '/grid answers 200');
    const form = formWith(w.page, 'rates');
    const { response, url } = await submit(w.page, form, '/grid');
    assert.equal(response.status(), 200, `the grid answers 200 (${url})`);
    assert.equal(await w.page.locator('table.payment-grid').count(), 1, 'one grid for one loan amount');
    const cells = await gridCells(w.page);
    assert.equal(await w.page.locator('table.payment-grid tbody tr').count(), 13, '13 rates');
    assert.equal(await w.page.locator('table.payment-grid thead th').count(), 1 + 5, 'a heading and 5 terms');
    assert.equal(cells.length, 13 * 5, '65 cells');

    const a = await api('/api/v1/loans/grid', DEFAULT_GRID);
    assert.equal(a.cells.length, 65, 'the API answers 65 cells');
    const key = (p, r, t) => `${Number(p)}|${Number(r)}|${Number(t)}`;
    const byKey = new Map(a.cells.map((c) => [key(c.principal, c.annual_rate_percent, c.term_months), c]));
    for (const c of cells) {
      assert.equal(c.path, '/loan', `cell ${c.rate} % × ${c.term} links to /loan`);
      assert.equal(c.figure, 'payment', 'the cell marks its payment');
      const want = byKey.get(key(c.principal, c.rate, c.term));
      assert.ok(want, `the API has a cell for ${c.principal} at ${c.rate} % over ${c.term}`);
      assert.equal(c.value, want.payment, `cell ${c.rate} % × ${c.term} months: data-value="${c.value}", the API answers ${want.payment}`);
      assert.equal(plain(c.text), want.payment, `cell ${c.rate} % × ${c.term} months shows ${c.text}`);
    }
    // Rows run by rate and columns by term, in the API's order.
    const rates = [...new Set(a.cells.map((c) => Number(c.annual_rate_percent)))];
    const terms = [...new Set(a.cells.map((c) => c.term_months))];
    for (const c of cells) {
      assert.equal(Number(c.rate), rates[c.row - 1], `row ${c.row} is rate ${rates[c.row - 1]}`);
      assert.equal(Number(c.term), terms[c.col - 1], `column ${c.col} is term ${terms[c.col - 1]}`);
    }
    const linked = await followJsonLink(w.page, '/api/v1/loans/grid', '/grid');
    assert.deepEqual(linked.cells, a.cells, 'the JSON link answers the same grid');
    await expectCautionVisible(w.page, '/grid result');
    await screenshot(w.page, 'grid-default');
    await w.assertClean('/grid default');
  } finally {
    await w.close();
  }
});

test('grid: a rate and a term marked through their links mark their row and column', async () => {
  const w = await openPage();
  try {
    await visit(w.page, `/grid?${new URLSearchParams(DEFAULT_GRID)}`);
    assert.equal(await w.page.locator('table.payment-grid .marked').count(), 0, 'nothing marked at first');
    const rateLink = w.page.locator('table.payment-grid tbody th a', { hasText: '6.500' });
    await Promise.all([w.page.waitForURL((u) => u.searchParams.get('mark_rate') !== null), rateLink.click()]);
    await w.page.waitForLoadState('load');
    assert.match(new URL(w.page.url()).searchParams.get('mark_rate'), /^6\.50*$/, 'the rate link marks 6.5');
    const markedRows = w.page.locator('table.payment-grid tbody tr.marked');
    assert.equal(await markedRows.count(), 1, 'one row marked');
    assert.match(await markedRows.locator('th').innerText(), /^6\.500/, 'the 6.500 % row');
    assert.equal(await markedRows.locator('td.marked').count(), 5, 'every cell of the row is marked');
    assert.equal(await w.page.locator('table.payment-grid td.marked').count(), 5, 'and no other cell');
    assert.equal(await w.page.locator('table.payment-grid thead th.marked').count(), 0, 'no term is marked yet');

    const termLink = w.page.locator('table.payment-grid thead th a').nth(4);
    await Promise.all([w.page.waitForURL((u) => u.searchParams.get('mark_term') !== null), termLink.click()]);
    await w.page.waitForLoadState('load');
    const url = new URL(w.page.url());
    assert.equal(url.searchParams.get('mark_term'), '360', 'the fifth term link marks 360');
    assert.match(url.searchParams.get('mark_rate') || '', /^6\.50*$/, 'and keeps the marked rate');
    assert.equal(await w.page.locator('table.payment-grid thead th.marked').count(), 1, 'one term heading marked');
    const marked = await w.page.locator('table.payment-grid tbody td.marked').evaluateAll((tds) =>
      tds.map((td) => ({ col: td.cellIndex, rowMarked: td.parentElement.classList.contains('marked') })));
    assert.equal(marked.filter((c) => c.col === 5).length, 13, 'every cell of the 360-month column is marked');
    assert.deepEqual(marked.filter((c) => c.col !== 5 && !c.rowMarked), [], 'no cell outside the marked column and row');
    assert.equal(marked.length, 13 + 4, 'the column and the rest of the marked row');
    assert.equal(await w.page.locator('table.payment-grid tbody tr.marked').count(), 1, 'the rate stays marked');
    await screenshot(w.page, 'grid-marked');
    await w.assertClean('/grid marked');
  } finally {
    await w.close();
  }
});

test('grid: a cell opens /loan with the same payment', async () => {
  const w = await openPage();
  try {
    await visit(w.page, `/grid?${new URLSearchParams(DEFAULT_GRID)}`);
    const cell = (await gridCells(w.page)).find((c) => Number(c.rate) === 6.875 && c.term === '240');
    assert.ok(cell, 'a cell for 6.875 % over 240 months');
    const link = w.page.locator('table.payment-grid tbody tr').nth(cell.row - 1).locator('td').nth(cell.col - 1).locator('a');
    const [response] = await Promise.all([
      w.page.waitForResponse((r) => r.request().isNavigationRequest() && new URL(r.url()).pathname === '/loan'),
      link.click(),
    ]);
    await w.page.waitForLoadState('load');
    assert.equal(response.status(), 200, '/loan answers 200');
    const payment = w.page.locator('main [data-figure="payment"]').first();
    assert.equal(await payment.getAttribute('data-value'), cell.value, `/loan shows the grid's payment ${cell.value}`);
    assert.equal(plain(await payment.innerText()), cell.value);
    await w.assertClean('/loan from a grid cell');
  } finally {
    await w.close();
  }
});

const PRINTED_GRID = '/grid?principal=300000&rates=6.000..7.500/0.125&terms=120,180,240,300,360,480';

test('grid: 13 rates × 6 terms print on exactly one A4 landscape page', async (t) => {
  const w = await openPage();
  try {
    const r = await visit(w.page, PRINTED_GRID);
    assert.equal(r.status(), 200);
    assert.equal((await gridCells(w.page)).length, 13 * 6, '78 cells');
    const sheet = w.page.locator('link[rel="stylesheet"][href="/static/grid-print.css"]');
    assert.equal(await sheet.count(), 1, 'the grid links its print stylesheet');
    assert.equal(await sheet.getAttribute('media'), 'print', 'for print only');
    const css = await (await fetch(`${BASE}/static/grid-print.css`)).text();
    assert.match(css, /@page\s*\{[^}]*size:\s*A4 landscape/, 'the print stylesheet asks for A4 landscape');
    const pdf = await w.page.pdf({ preferCSSPageSize: true, printBackground: false });
    const text = pdf.toString('latin1');
    const pages = (text.match(/\/Type\s*\/Page(?![a-zA-Z])/g) || []).length;
    const box = text.match(/\/MediaBox\s*\[\s*0 0 ([\d.]+) ([\d.]+)\s*\]/);
    t.diagnostic(`PDF ${pdf.length} bytes, ${pages} page(s), media box ${box ? `${box[1]} × ${box[2]} pt` : 'not found'}`);
    assert.ok(box, 'the PDF has a media box');
    assert.ok(Number(box[1]) > Number(box[2]), 'the page is landscape');
    assert.ok(Math.abs(Number(box[1]) - 841.89) < 2 && Math.abs(Number(box[2]) - 595.28) < 2, 'the page is A4');
    assert.equal(pages, 1, 'the grid prints on exactly one page');
    // Nothing is cut off at the side: laid out at the sheet's width inside its
    // 10 mm margins (277 mm, 1047 px), the grid does not scroll in its wrapper.
    await w.page.setViewportSize({ width: 1047, height: 718 });
    await w.page.emulateMedia({ media: 'print' });
    const clip = await w.page.locator('.grid-result .table-wrap').first().evaluate((el) => el.scrollWidth - el.clientWidth);
    assert.ok(clip <= 0, `in print the grid is ${clip} px wider than the sheet`);
    await w.assertClean('/grid printed');
  } finally {
    await w.close();
  }
});

test('grid: a range with a zero step is refused next to the rates field, with 422', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/grid');
    const form = formWith(w.page, 'rates');
    await typeInto(form, 'principal', '300000');
    await typeInto(form, 'rates', '6..7/0');
    await typeInto(form, 'terms', '360');
    const { response } = await submit(w.page, form, '/grid');
    const found = await expectRefused(w.page, response, 'rates', /step/, '/grid zero step');
    assert.equal(found.invalid, 'true', 'the rates field is marked invalid');
    assert.equal(await formWith(w.page, 'rates').locator('[name="rates"]').inputValue(), '6..7/0', 'the form keeps what was typed');
    assert.equal(await w.page.locator('table.payment-grid').count(), 0, 'no grid is shown');
    // The same address, opened directly.
    const r = await visit(w.page, '/grid?principal=300000&rates=6..7/0&terms=360');
    await expectRefused(w.page, r, 'rates', /step/, '/grid?…rates=6..7/0');
    await screenshot(w.page, 'grid-error');
    await w.assertClean('/grid error');
  } finally {
    await w.close();
  }
});

// ------------------------------------------------------- all three, by width

const RESULTS = [
  { name: 'refinance', path: '/refinance?current.balance=187500&current.annual_rate_percent=7.25&current.remaining_payments=312&annual_rate_percent=6.125&term_months=360&closing_costs=3200&points_percent=1&horizon_months=96' },
  { name: 'options', path: '/options?principal=200000&term_months=360&option_label=No+points&option_rate_percent=6.75&option_points_percent=0&option_other_costs=0&option_label=One+point&option_rate_percent=6.5&option_points_percent=1&option_other_costs=0&option_label=Two+points&option_rate_percent=6.25&option_points_percent=2&option_other_costs=0' },
  { name: 'grid', path: PRINTED_GRID },
];
const FORMS = [
  { name: 'refinance-form', path: '/refinance' },
  { name: 'options-form', path: '/options' },
  { name: 'grid-form', path: '/grid' },
];
const REFUSED = [
  { name: 'refinance-refused', path: '/refinance?current.principal=250000&current.annual_rate_percent=7.25&current.term_months=360&current.payments_made=360&annual_rate_percent=6.125&term_months=360' },
  { name: 'options-refused', path: '/options?principal=200000&term_months=360&option_label=Only&option_rate_percent=6.5' },
  { name: 'grid-refused', path: '/grid?principal=300000&rates=6..7/0&terms=360' },
];

for (const p of RESULTS) {
  test(`${p.name} at 390 px: the result does not scroll sideways and shows the caution`, async () => {
    const w = await openPage();
    try {
      await w.page.setViewportSize({ width: 390, height: 844 });
      const r = await visit(w.page, p.path);
      assert.equal(r.status(), 200, `${p.path} answers 200`);
      const over = await sidewaysOverflow(w.page);
      assert.ok(over <= 0, `${p.name} at 390 px: the document is ${over} px wider than the viewport`);
      await expectCautionVisible(w.page, `${p.name} at 390 px`);
      await screenshot(w.page, `${p.name}-390`);
      await w.assertClean(`${p.name} at 390 px`);
    } finally {
      await w.close();
    }
  });
}

for (const width of [390, 1366]) {
  for (const p of [...FORMS, ...RESULTS, ...REFUSED]) {
    test(`axe at ${width} px: ${p.name} has no violations`, async () => {
      const w = await openPage({ bypassCSP: true });
      try {
        await w.page.setViewportSize({ width, height: width === 390 ? 844 : 900 });
        const r = await visit(w.page, p.path);
        assert.equal(r.status(), p.name.endsWith('refused') ? 422 : 200, `${p.path} status`);
        const violations = await axeViolations(w.page);
        for (const v of violations) {
          console.log(`axe ${width} px ${p.path}: [${v.impact}] ${v.id}: ${v.help} (${v.count} element${v.count === 1 ? '' : 's'})`);
          for (const n of v.nodes) console.log(`    ${n.target}: ${(n.summary || '').replace(/\s+/g, ' ').slice(0, 300)}`);
        }
        assert.deepEqual(violations.map((v) => `${v.impact} ${v.id}: ${v.help}`), [], `${p.name} at ${width} px: no accessibility violations`);
      } finally {
        await w.close();
      }
    });
  }
}
