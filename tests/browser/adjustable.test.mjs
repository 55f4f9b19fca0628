// The loan page with adjustable-rate terms: a loan officer types an adjustable
// loan (index, margin, caps, maximum, rounding) with escrow and mortgage
// insurance, and reads back the section "How the rate and payment can change",
// its chart and tables, and the projected payments against the JSON twin
// (GET /api/v1/loans/schedule, same query). Then: the address round-trips, the
// highest path, refused terms, 390 px and axe, and the check page's APR of an
// adjustable loan. Every figure here is an invented demo figure, except the
// check page's, which is the published example named beside it.
import { test, after } from 'node:test';
import assert from 'node:assert/strict';
import {
  BASE, openPage, visit, formWith, typeInto, submit, api, expectFigure, expectRate, resultScope,
  expectCautionVisible, followJsonLink, axeViolations, closeBrowser, reportMissingHooks,
  scheduleRows, screenshot, plain, grouped,
} from './lib.mjs';

after(async () => {
  reportMissingHooks();
  await closeBrowser();
});

const SCHEDULE_API = '/api/v1/loans/schedule';
const ADJUSTABLE_GROUP = 'Adjustable rate (leave blank for a fixed rate)';
const FULL_PAYMENT_GROUP = 'Full monthly payment: escrow and mortgage insurance';
const SECTION_TITLE = 'How the rate and payment can change';

/** The demo loan as the loan officer types it (field name → text typed). */
const TYPED = [
  ['principal', '300,000'],
  ['annual_rate_percent', '6'],
  ['term_months', '360'],
];
const TYPED_ADJUSTABLE = [
  ['adjustable.index_percent', '4.5'],
  ['adjustable.margin_percent', '2.75'],
  ['adjustable.first_change_payment', '61'],
  ['adjustable.change_every', '12'],
  ['adjustable.first_change_cap_percent', '2'],
  ['adjustable.periodic_cap_percent', '2'],
  ['adjustable.lifetime_max_percent', '11'],
];
const TYPED_FULL_PAYMENT = [
  ['escrow_monthly', '410'],
  ['mortgage_insurance_monthly', '120'],
  ['mortgage_insurance_payments', '84'],
];

/** The same loan as one address (adjustable.NAME fields), and in the API's compact form. */
const LOAN_QUERY = 'principal=300000&annual_rate_percent=6&term_months=360'
  + '&adjustable.index_percent=4.5&adjustable.margin_percent=2.75&adjustable.first_change_payment=61'
  + '&adjustable.change_every=12&adjustable.first_change_cap_percent=2&adjustable.periodic_cap_percent=2'
  + '&adjustable.lifetime_max_percent=11&adjustable.rounding=nearest_eighth'
  + '&escrow_monthly=410&mortgage_insurance_monthly=120&mortgage_insurance_payments=84';
const COMPACT = {
  principal: '300000', annual_rate_percent: '6', term_months: '360',
  adjustable: 'index:4.5,margin:2.75,first_change:61,every:12,first_cap:2,cap:2,max:11,rounding:nearest_eighth',
  escrow_monthly: '410', mortgage_insurance_monthly: '120', mortgage_insurance_payments: '84',
};

/** The summary figures of the adjustable section (money) and its rates. */
const ADJ_MONEY = ['highest_payment', 'lowest_payment'];
const ADJ_RATES = ['fully_indexed_rate_percent', 'highest_rate_percent'];

/**
 * A page's query as the API reads it: a number typed as a person types it
 * ("300,000", "6%") written plainly; every other value as it is.
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

/** Does the document scroll sideways? (scrollWidth over clientWidth, in px; 0 or less when it fits) */
async function sidewaysOverflow(page) {
  return page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
}

/** Opens a folded group of the form by its summary, as a person clicks it; answers the <details>. */
async function unfold(form, summary) {
  const details = form.locator('details', { has: form.page().locator('summary', { hasText: summary }) }).first();
  assert.equal(await details.count(), 1, `the form has a folded group "${summary}"`);
  if (!(await details.evaluate((d) => d.open))) await details.locator('summary').first().click();
  assert.equal(await details.evaluate((d) => d.open), true, `the group "${summary}" opens when its summary is clicked`);
  return details;
}

/** Types the demo adjustable loan into the /loan form, opening both groups first. */
async function typeAdjustableLoan(page, { skipFullPayment = false, overrides = {} } = {}) {
  const form = formWith(page, 'principal');
  for (const [name, text] of TYPED) await typeInto(form, name, overrides[name] ?? text);
  await unfold(form, ADJUSTABLE_GROUP);
  for (const [name, text] of TYPED_ADJUSTABLE) await typeInto(form, name, overrides[name] ?? text);
  await typeInto(form, 'adjustable.rounding', 'nearest_eighth');
  for (const [name, text] of Object.entries(overrides)) {
    if (!TYPED.some(([n]) => n === name) && !TYPED_ADJUSTABLE.some(([n]) => n === name)) await typeInto(form, name, text);
  }
  if (!skipFullPayment) {
    await unfold(form, FULL_PAYMENT_GROUP);
    for (const [name, text] of TYPED_FULL_PAYMENT) await typeInto(form, name, text);
  }
  return form;
}

/** The adjustable section, found by its heading (a region named "How the rate and payment can change"). */
function adjustableSection(page) {
  return page.getByRole('region', { name: SECTION_TITLE });
}

/** The figures a person reads off the result, by data-figure: {name: [data-value, text]}. */
async function shownFigures(page) {
  return page.locator('main [data-figure]').evaluateAll((els) =>
    Object.fromEntries(els.map((el) => [el.getAttribute('data-figure'), [el.getAttribute('data-value'), el.textContent.trim()]])));
}

/** The values of every field of the loan form: {name: value}. */
async function fieldValues(page) {
  return formWith(page, 'principal').locator('input[name], select[name]').evaluateAll((els) =>
    Object.fromEntries(els.filter((el) => el.type !== 'hidden').map((el) => [el.name, el.value])));
}

/** The projected-payments table as the page shows it: column heads and rows {head, cells}. */
async function projectedTable(page) {
  const table = page.locator('main table.projected-payments');
  assert.equal(await table.count(), 1, 'one table.projected-payments');
  return table.evaluate((t) => ({
    heads: [...t.querySelectorAll('thead th')].map((th) => th.textContent.replace(/\s+/g, ' ').trim()),
    rows: [...t.querySelectorAll('tbody tr')].map((tr) => ({
      head: (tr.querySelector('th') || { textContent: '' }).textContent.replace(/\s+/g, ' ').trim(),
      cells: [...tr.querySelectorAll('td')].map((td) => td.textContent.replace(/\s+/g, ' ').trim()),
    })),
  }));
}

/**
 * The whole-dollar amounts a projected-payments cell shows: "1,474 – 2,155" →
 * [1474, 2155]; "+ 120" → [120]; "—" (none) → [0]. Every amount of four digits
 * or more must be written with its thousands grouped.
 */
function cellAmounts(text, where) {
  const t = text.replace(/[\u00a0\u202f\u2009]/g, ' ').trim();
  if (/^[—–-]$/.test(t)) return [0];
  const amounts = t.match(/\d[\d,]*/g) || [];
  for (const a of amounts) {
    const digits = a.replace(/,/g, '');
    assert.equal(a, grouped(digits), `${where}: "${text}" writes ${digits} with its thousands grouped (${grouped(digits)})`);
  }
  assert.doesNotMatch(t, /\d\.\d/, `${where}: "${text}" is in whole dollars`);
  return amounts.map((a) => Number(a.replace(/,/g, '')));
}

/** What the API's min/max pair shows as: one amount when they agree, else both. */
function range(min, max) {
  return Number(min) === Number(max) ? [Number(min)] : [Number(min), Number(max)];
}

/** Checks the projected-payments table against the API's projected_payments. */
async function expectProjected(page, projected, where) {
  const shown = await projectedTable(page);
  const yearsHead = (p) => (p.from_year === p.to_year ? `Year ${p.from_year}` : `Years ${p.from_year}\u2013${p.to_year}`);
  // The columns of the Loan Estimate's Projected Payments table, by years of the loan
  // (12 CFR 1026.37(c)(1)); whole dollars (§1026.37(o)(4)).
  assert.deepEqual(shown.heads.slice(1), ['Years 1\u20135', 'Year 6', 'Year 7', 'Years 8\u201330'], `${where}: the projected-payments columns`);
  assert.deepEqual(shown.heads.slice(1), projected.map(yearsHead), `${where}: the columns are the API's years`);
  const row = (re) => {
    const r = shown.rows.find((x) => re.test(x.head));
    assert.ok(r, `${where}: a row ${re} in the projected payments (rows: ${JSON.stringify(shown.rows.map((x) => x.head))})`);
    assert.equal(r.cells.length, projected.length, `${where}: row "${r.head}" has one cell per column`);
    return r;
  };
  const pi = row(/principal and interest/i);
  const mi = row(/mortgage insurance/i);
  const escrow = row(/escrow/i);
  const total = row(/total/i);
  for (const [i, p] of projected.entries()) {
    const col = yearsHead(p);
    assert.deepEqual(cellAmounts(pi.cells[i], `${where} ${col} principal and interest`), range(p.principal_interest_min, p.principal_interest_max),
      `${where}: ${col} principal and interest shows "${pi.cells[i]}", the API answers ${p.principal_interest_min}–${p.principal_interest_max}`);
    assert.deepEqual(cellAmounts(mi.cells[i], `${where} ${col} mortgage insurance`), [Number(p.mortgage_insurance)],
      `${where}: ${col} mortgage insurance shows "${mi.cells[i]}", the API answers ${p.mortgage_insurance}`);
    assert.deepEqual(cellAmounts(escrow.cells[i], `${where} ${col} escrow`), [Number(p.escrow)],
      `${where}: ${col} escrow shows "${escrow.cells[i]}", the API answers ${p.escrow}`);
    assert.deepEqual(cellAmounts(total.cells[i], `${where} ${col} total`), range(p.total_min, p.total_max),
      `${where}: ${col} total shows "${total.cells[i]}", the API answers ${p.total_min}–${p.total_max}`);
  }
}

/** Checks every figure of the adjustable result against the API answer `a`. */
async function expectAdjustableResult(page, a, where) {
  const summary = await resultScope(page, 'summary');
  await expectFigure(summary, 'payment', a.summary.payment, where);
  const section = adjustableSection(page);
  assert.equal(await section.count(), 1, `${where}: a section "${SECTION_TITLE}", named by its heading`);
  assert.ok(await section.isVisible(), `${where}: the section "${SECTION_TITLE}" is shown`);
  for (const key of ADJ_MONEY) await expectFigure(section, key, a.adjustable_summary[key], where);
  // The rates exactly as the API writes them ("7.25", "11"): data-value and text
  // ("11 %"). (lib's expectRate refuses a whole-number rate such as "11 %".)
  for (const key of ADJ_RATES) await expectFigure(section, key, a.adjustable_summary[key], where);
}

// ------------------------------------------------------------ (1) typed loan

test('adjustable: typed with escrow and mortgage insurance, the figures, tables, projected payments and chart are the API\'s', async () => {
  const w = await openPage();
  try {
    const first = await visit(w.page, '/loan');
    assert.equal(first.status(), 200, '/loan answers 200');
    const form0 = formWith(w.page, 'principal');
    for (const summary of [ADJUSTABLE_GROUP, FULL_PAYMENT_GROUP]) {
      const details = form0.locator('details', { has: w.page.locator('summary', { hasText: summary }) });
      assert.equal(await details.count(), 1, `the form has a group "${summary}"`);
      assert.equal(await details.evaluate((d) => d.open), false, `the group "${summary}" is folded on the empty form`);
    }
    assert.equal(await adjustableSection(w.page).count(), 0, 'the empty form shows no adjustable result');

    const form = await typeAdjustableLoan(w.page);
    const { response, url } = await submit(w.page, form, '/loan');
    assert.equal(response.status(), 200, `the result answers 200 (${url})`);
    assert.equal(url.searchParams.get('principal'), '300,000', 'the address keeps what was typed');
    assert.equal(url.searchParams.get('adjustable.rounding'), 'nearest_eighth', 'the address carries the rounding chosen');

    const a = await apiFor(SCHEDULE_API, plainQuery(url));
    assert.ok(a.adjustable_summary, 'the API reads the page\'s query as an adjustable loan');
    // The compact query (adjustable=KEY:VALUE,…) is the same loan: the same answer.
    const compact = await api(SCHEDULE_API, COMPACT);
    assert.deepEqual(compact.adjustable_summary, a.adjustable_summary, 'the compact query answers the same adjustable summary');
    assert.deepEqual(compact.projected_payments, a.projected_payments, 'the compact query answers the same projected payments');

    await expectAdjustableResult(w.page, a, '/loan adjustable (typed)');
    const section = adjustableSection(w.page);

    // The tables of the section, each with its caption.
    const captions = await section.locator('table caption').allInnerTexts();
    for (const re of [/adjustable interest rate/i, /for every 10,000\.00 borrowed/i, /underwrit/i]) {
      assert.ok(captions.some((c) => re.test(c)), `the section has a table captioned ${re} (captions: ${JSON.stringify(captions)})`);
    }
    const tableText = async (re) => (await section.locator('table', { has: w.page.locator('caption', { hasText: re }) }).first().innerText())
      .replace(/[\u00a0\u202f\u2009]/g, ' ');
    // The rate table: minimum and maximum rates, and the first change.
    const rt = await tableText(/adjustable interest rate/i);
    for (const v of [a.rate_table.minimum_rate_percent, a.rate_table.maximum_rate_percent]) {
      assert.ok(rt.includes(`${v} %`) || rt.includes(`${v}%`), `the rate table shows ${v} %: ${rt}`);
    }
    assert.match(rt, new RegExp(`\\b${a.rate_table.first_change_payment}\\b`), 'the rate table shows the first change');
    // The example for every 10,000 borrowed: its initial and highest payments.
    const ex = await tableText(/10,000\.00 borrowed/i);
    for (const key of ['initial_payment', 'highest_payment']) {
      assert.ok(ex.includes(grouped(a.program_example[key])), `the 10,000 example shows ${key} ${a.program_example[key]}: ${ex}`);
    }
    // The payments lenders underwrite with.
    const uw = await tableText(/underwrit/i);
    for (const key of ['ability_to_repay_payment', 'qualified_mortgage_payment']) {
      assert.ok(uw.includes(grouped(a.underwriting[key])), `the underwriting table shows ${key} ${a.underwriting[key]}: ${uw}`);
    }

    // The projected payments, cell by cell.
    await expectProjected(w.page, a.projected_payments, '/loan adjustable (typed)');

    // The chart: server-rendered SVG with a title, payment and rate on the three paths.
    // One chart, drawn twice (wide for a desk, narrow for a phone; the page shows one).
    const chart = section.locator('svg.chart.wide');
    assert.equal(await section.locator('svg.chart').count(), 2, 'the section has one chart, drawn wide and narrow');
    const c = await chart.evaluate((svg) => {
      const labelled = (svg.getAttribute('aria-labelledby') || '').split(/\s+/).filter(Boolean);
      const title = svg.querySelector(':scope > title');
      return {
        role: svg.getAttribute('role'),
        title: title ? title.textContent.trim() : '',
        titleNames: Boolean(title && title.id && labelled.includes(title.id)) || Boolean(svg.getAttribute('aria-label')),
        legend: [...svg.querySelectorAll('text')].map((t) => t.textContent.trim()),
        lines: [...svg.querySelectorAll('polyline')].map((p) => ({
          cls: p.getAttribute('class'),
          ys: [...new Set(p.getAttribute('points').trim().split(/\s+/).map((xy) => xy.split(',')[1]))],
          stroke: getComputedStyle(p).stroke,
          width: getComputedStyle(p).strokeWidth,
        })),
      };
    });
    assert.ok(c.title, 'the chart has a <title>');
    assert.ok(c.titleNames, 'the chart\'s title names it (aria-labelledby)');
    assert.equal(c.role, 'img', 'the chart is an image to assistive technology');
    for (const name of ['Composite', 'Highest', 'Lowest']) {
      assert.ok(c.legend.some((t) => t.toLowerCase() === name.toLowerCase()), `the chart's legend names the ${name.toLowerCase()} path`);
    }
    // Payment and rate: one line per path in each panel; the payment panel (drawn first)
    // steps as often as the path's payment changes.
    assert.equal(c.lines.length, 6, `payment and rate on three paths: six lines (found ${c.lines.length})`);
    for (const l of c.lines) assert.ok(l.stroke !== 'none' && l.width !== '0px', `the line ${l.cls} is drawn`);
    for (const [i, name] of ['composite', 'highest', 'lowest'].entries()) {
      const path = a.rate_paths.find((p) => p.path === name);
      assert.ok(path, `the API answers the ${name} path`);
      const payments = new Set(path.steps.map((s) => s.payment)).size;
      const rates = new Set(path.steps.map((s) => s.rate_percent)).size;
      assert.equal(c.lines[i].ys.length, payments, `the ${name} payment line has ${payments} level(s), as the API's steps`);
      assert.equal(c.lines[i + 3].ys.length, rates, `the ${name} rate line has ${rates} level(s), as the API's steps`);
    }

    await expectCautionVisible(w.page, '/loan adjustable result');
    const linked = await followJsonLink(w.page, SCHEDULE_API, '/loan adjustable');
    assert.deepEqual(linked.adjustable_summary, a.adjustable_summary, 'the JSON link answers the same adjustable summary');
    assert.deepEqual(linked.projected_payments, a.projected_payments, 'the JSON link answers the same projected payments');
    await screenshot(w.page, 'loan-adjustable-typed');
    await w.assertClean('/loan adjustable');
  } finally {
    await w.close();
  }
});

// ------------------------------------------------------- (2) the address

test('adjustable: the address round-trips: a reload and a fresh visit show the same figures, the form keeps every value', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/loan');
    const { response, url } = await submit(w.page, await typeAdjustableLoan(w.page), '/loan');
    assert.equal(response.status(), 200, `the result answers 200 (${url})`);
    const figures = await shownFigures(w.page);
    const values = await fieldValues(w.page);
    for (const [name, text] of [...TYPED, ...TYPED_ADJUSTABLE, ...TYPED_FULL_PAYMENT]) {
      assert.equal(values[name], text, `the result's form keeps ${name} as typed`);
    }
    assert.equal(values['adjustable.rounding'], 'nearest_eighth', 'the result\'s form keeps the rounding chosen');
    for (const key of [...ADJ_MONEY, ...ADJ_RATES, 'payment']) assert.ok(figures[key], `the result shows ${key}`);
    const projected = await projectedTable(w.page);

    // Reload the address.
    const again = await w.page.reload({ waitUntil: 'load' });
    assert.equal(again.status(), 200, 'the reload answers 200');
    assert.equal(w.page.url(), url.toString(), 'the reload keeps the address');
    assert.deepEqual(await shownFigures(w.page), figures, 'the reload shows the same figures');
    assert.deepEqual(await fieldValues(w.page), values, 'the reload keeps every field of the form');
    assert.deepEqual(await projectedTable(w.page), projected, 'the reload shows the same projected payments');
    for (const summary of [ADJUSTABLE_GROUP, FULL_PAYMENT_GROUP]) {
      const details = formWith(w.page, 'principal').locator('details', { has: w.page.locator('summary', { hasText: summary }) });
      assert.equal(await details.evaluate((d) => d.open), true, `the group "${summary}" is open, so its kept values are in view`);
    }

    // The same address, opened by someone else (a new browser context).
    const other = await openPage();
    try {
      const r = await visit(other.page, url.pathname + url.search);
      assert.equal(r.status(), 200);
      assert.deepEqual(await shownFigures(other.page), figures, 'a shared address shows the same figures');
      assert.deepEqual(await fieldValues(other.page), values, 'a shared address fills the form the same');
      await other.assertClean('/loan adjustable shared');
    } finally {
      await other.close();
    }
    await w.assertClean('/loan adjustable reloaded');
  } finally {
    await w.close();
  }
});

// --------------------------------------------------- (3) the highest path

test('adjustable: rate path "highest": payment 85 of the schedule is the API\'s highest path', async () => {
  const w = await openPage();
  try {
    await visit(w.page, `/loan?${LOAN_QUERY}`);
    const form = formWith(w.page, 'principal');
    await unfold(form, ADJUSTABLE_GROUP);
    await typeInto(form, 'rate_path', 'highest');
    const { response, url } = await submit(w.page, form, '/loan');
    assert.equal(response.status(), 200, `the result answers 200 (${url})`);
    assert.equal(url.searchParams.get('rate_path'), 'highest', 'the address carries the path chosen');

    const a = await apiFor(SCHEDULE_API, plainQuery(url));
    const highest = a.rate_paths.find((p) => p.path === 'highest');
    assert.ok(highest, 'the API answers the highest path');
    // The step in force at payment 85 (the last one starting at or before it).
    const step = highest.steps.filter((s) => s.from_payment <= 85).at(-1);
    assert.equal(a.schedule[84].number, 85);
    assert.equal(a.schedule[84].payment, step.payment, 'the API\'s schedule on the highest path pays its step at 85');
    assert.equal(a.adjustable_summary.highest_payment_first_payment, 85, 'the demo loan reaches its highest payment at 85');

    const rows = await scheduleRows(w.page.locator('main'));
    const row = rows.find((r) => r.number === 85);
    assert.ok(row, 'the schedule shows payment 85');
    assert.equal(plain(row.cells[1]), step.payment,
      `payment 85 shows ${row.cells[1]}, the API's highest path pays ${step.payment} from payment ${step.from_payment}`);
    assert.ok(row.cells.includes(grouped(step.payment)), `payment 85 is written with its thousands grouped (${grouped(step.payment)})`);
    await expectFigure(adjustableSection(w.page), 'highest_payment', step.payment, '/loan highest path');
    assert.match(await adjustableSection(w.page).innerText(), /highest path/i, 'the section says the schedule follows the highest path');
    await w.assertClean('/loan highest path');
  } finally {
    await w.close();
  }
});

// ----------------------------------------------------- (4) refused terms

/**
 * Checks a refused form: 422, the page (HTML), a visible message matching
 * `words` next to field `name` (through its aria-describedby), the field marked
 * invalid and shown, what was typed kept, and no result.
 */
async function expectRefusedAt(page, response, name, typed, words, where) {
  assert.equal(response.status(), 422, `${where}: a refused form answers its page with 422`);
  assert.match(response.headers()['content-type'] || '', /^text\/html/, `${where}: the answer is the page, not problem JSON`);
  const found = await page.evaluate(({ name, source }) => {
    const re = new RegExp(source, 'i');
    const shown = (el) => el && el.getClientRects().length > 0 && getComputedStyle(el).visibility !== 'hidden';
    const input = document.querySelector(`form [name="${name}"]`);
    if (!input) return { input: false };
    const messages = (input.getAttribute('aria-describedby') || '').split(/\s+/).filter(Boolean)
      .map((id) => document.getElementById(id)).filter((el) => el && re.test(el.textContent));
    const field = input.closest('.field') || input.parentElement;
    return {
      input: true,
      invalid: input.getAttribute('aria-invalid'),
      value: input.value,
      visible: shown(input),
      next: messages.filter(shown).map((el) => el.textContent.trim()),
      beside: messages.some((el) => field.contains(el)),
    };
  }, { name, source: words.source });
  assert.ok(found.input, `${where}: the form still has ${name}`);
  assert.ok(found.next.length > 0, `${where}: a visible error (${words}) describes ${name}: ${JSON.stringify(found)}`);
  assert.ok(found.beside, `${where}: the error is beside the field ${name}`);
  assert.equal(found.invalid, 'true', `${where}: ${name} is marked invalid`);
  assert.ok(found.visible, `${where}: the field in error is shown (its group is open)`);
  assert.equal(found.value, typed, `${where}: the form keeps what was typed`);
  assert.equal(await page.locator('main [data-figure]').count(), 0, `${where}: no figure is shown`);
  assert.equal(await adjustableSection(page).count(), 0, `${where}: no adjustable result`);
  assert.equal(await page.locator('main table.projected-payments').count(), 0, `${where}: no projected payments`);
}

test('adjustable: a floor above the maximum, and a first change beyond the term, are refused next to their fields', async () => {
  const w = await openPage();
  try {
    // Floor 12 % with a maximum of 11 %.
    await visit(w.page, '/loan');
    let form = await typeAdjustableLoan(w.page, { skipFullPayment: true, overrides: { 'adjustable.floor_percent': '12' } });
    let { response } = await submit(w.page, form, '/loan');
    await expectRefusedAt(w.page, response, 'adjustable.floor_percent', '12', /floor|maximum|above/, '/loan floor 12 > max 11');
    await screenshot(w.page, 'loan-adjustable-floor-error');
    const direct = await visit(w.page, `/loan?${LOAN_QUERY}&adjustable.floor_percent=12`);
    await expectRefusedAt(w.page, direct, 'adjustable.floor_percent', '12', /floor|maximum|above/, '/loan?…floor_percent=12');

    // First change at payment 400 of a 360-payment loan.
    await visit(w.page, '/loan');
    form = await typeAdjustableLoan(w.page, { skipFullPayment: true, overrides: { 'adjustable.first_change_payment': '400' } });
    ({ response } = await submit(w.page, form, '/loan'));
    await expectRefusedAt(w.page, response, 'adjustable.first_change_payment', '400', /term|within|360/, '/loan first change 400');
    await screenshot(w.page, 'loan-adjustable-first-change-error');
    await w.assertClean('/loan adjustable refused');
  } finally {
    await w.close();
  }
});

// ---------------------------------------------------- (5) 390 px and axe

// The smallest chart text, in CSS px as drawn, we hold readable on a phone. This
// is our own floor (no standard fixes one); the charts' CSS asks for 11–12 px.
const MIN_CHART_TEXT_PX = 9;

test('adjustable at 390 px: the result does not scroll sideways and shows the caution', async () => {
  const w = await openPage();
  try {
    await w.page.setViewportSize({ width: 390, height: 844 });
    const r = await visit(w.page, `/loan?${LOAN_QUERY}`);
    assert.equal(r.status(), 200);
    assert.equal(await adjustableSection(w.page).count(), 1, 'the adjustable result is shown');
    assert.equal(await w.page.locator('main table.projected-payments').count(), 1, 'the projected payments are shown');
    const over = await sidewaysOverflow(w.page);
    assert.ok(over <= 0, `at 390 px the document is ${over} px wider than the viewport`);
    await expectCautionVisible(w.page, '/loan adjustable at 390 px');
    await screenshot(w.page, 'loan-adjustable-390');
    await w.assertClean('/loan adjustable at 390 px');
  } finally {
    await w.close();
  }
});

test('adjustable at 390 px: the chart text stays readable', async () => {
  const w = await openPage();
  try {
    await w.page.setViewportSize({ width: 390, height: 844 });
    const r = await visit(w.page, `/loan?${LOAN_QUERY}`);
    assert.equal(r.status(), 200);
    // The chart's text as drawn: font size times the SVG's scale on screen.
    // At this width the page shows the narrow drawing of the chart.
    const sizes = await adjustableSection(w.page).locator('svg.chart.narrow').evaluate((svg) =>
      [...svg.querySelectorAll('text')].map((t) => {
        const m = t.getScreenCTM();
        const scale = Math.sqrt(m.a * m.a + m.b * m.b);
        return { text: t.textContent.trim(), px: Math.round(parseFloat(getComputedStyle(t).fontSize) * scale * 10) / 10 };
      }));
    assert.ok(sizes.length > 0, 'the chart has text');
    const small = sizes.filter((s) => s.px < MIN_CHART_TEXT_PX);
    assert.deepEqual(small.map((s) => `"${s.text}" at ${s.px} px`), [],
      `at 390 px every chart label is drawn at ${MIN_CHART_TEXT_PX} px or more (smallest ${Math.min(...sizes.map((s) => s.px))} px)`);
    await w.assertClean('/loan adjustable chart at 390 px');
  } finally {
    await w.close();
  }
});

const AXE_PAGES = [
  { name: 'adjustable result', path: `/loan?${LOAN_QUERY}`, status: 200 },
  { name: 'adjustable refused', path: `/loan?${LOAN_QUERY}&adjustable.floor_percent=12`, status: 422 },
];

for (const width of [390, 1366]) {
  for (const p of AXE_PAGES) {
    test(`axe at ${width} px: the ${p.name} has no violations`, async () => {
      const w = await openPage({ bypassCSP: true });
      try {
        await w.page.setViewportSize({ width, height: width === 390 ? 844 : 900 });
        const r = await visit(w.page, p.path);
        assert.equal(r.status(), p.status, `${p.path} status`);
        const violations = await axeViolations(w.page);
        for (const v of violations) {
          console.log(`axe ${width} px ${p.name}: [${v.impact}] ${v.id}: ${v.help} (${v.count} element${v.count === 1 ? '' : 's'})`);
          for (const n of v.nodes) console.log(`    ${n.target}: ${(n.summary || '').replace(/\s+/g, ' ').slice(0, 300)}`);
        }
        assert.deepEqual(violations.map((v) => `${v.impact} ${v.id}: ${v.help}`), [], `${p.name} at ${width} px: no accessibility violations`);
      } finally {
        await w.close();
      }
    });
  }
}

// ------------------------------------------------ (6) the check page's APR

test('check: an adjustable loan\'s APR is the published 11.63 %, within the 0.25-point tolerance', async () => {
  // Comment 17(c)(1)-10 (12 CFR 1026, Supplement I, Official Interpretations):
  // 100,000 over 30 years at 9 % for the first year, then the index at
  // consummation (10 %) plus a 2-point margin; "12 payments of $804.62 …
  // APR 11.63 %". The lifetime maximum of 15 % does not bind.
  const q = {
    principal: '100000', annual_rate_percent: '9', term_months: '360',
    adjustable: 'index:10,margin:2,first_change:13,every:12,max:15', quoted_apr_percent: '11.63',
  };
  const w = await openPage();
  try {
    await visit(w.page, '/check');
    // The check form has no adjustable fields (yet): the loan is given by its address.
    const hasFields = (await formWith(w.page, 'principal').locator('[name^="adjustable"]').count()) > 0;
    if (hasFields) console.log('note: /check now has adjustable fields; this test still drives it by its address');
    const r = await visit(w.page, `/check?${new URLSearchParams(q)}`);
    assert.equal(r.status(), 200, '/check with an adjustable loan answers 200');
    const a = await api('/api/v1/loans/check', q);
    const scope = await resultScope(w.page, 'summary');
    // Comment 17(c)(1)-10: the first 12 payments are $804.62.
    await expectFigure(scope, 'computed_payment', '804.62', '/check adjustable (comment 17(c)(1)-10)');
    await expectFigure(scope, 'computed_payment', a.computed_payment, '/check adjustable');
    await expectRate(scope, 'apr_percent', a.apr_percent_full, '/check adjustable');
    // Comment 17(c)(1)-10: APR 11.63 %, to the 0.25-point tolerance of an irregular
    // transaction (12 CFR 1026.22(a)(3)).
    const aprHook = scope.locator('[data-figure="apr_percent"]').first();
    assert.equal(await aprHook.count(), 1, 'the page shows the APR as [data-figure="apr_percent"]');
    const shownApr = Number(plain(await aprHook.innerText()));
    assert.ok(Math.abs(shownApr - 11.63) <= 0.25, `the APR shown (${shownApr} %) is within 0.25 of the published 11.63 %`);
    assert.ok(Math.abs(Number(a.apr_percent_full) - 11.63) <= 0.25, `the API's APR (${a.apr_percent_full}) is within 0.25 of 11.63`);
    assert.equal(a.apr_tolerance_points, '0.25', 'the API applies the irregular transaction\'s tolerance');
    assert.equal(a.apr_within_tolerance, true);
    const text = await w.page.locator('main').innerText();
    assert.match(text, /within[^.]*toleran/i, 'the page says the quoted APR is within the tolerance');
    assert.doesNotMatch(text, /(not within|outside)[^.]*toleran/i, 'and does not say it is outside');
    assert.match(text, /irregular/i, 'the page says the transaction is irregular');
    await expectCautionVisible(w.page, '/check adjustable');
    await screenshot(w.page, 'check-adjustable');
    await w.assertClean('/check adjustable');
  } finally {
    await w.close();
  }
});
