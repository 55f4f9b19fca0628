// The savings page: a plan typed like a person, read back against
// GET /api/v1/savings/plan with the same query.
import { test, after } from 'node:test';
import assert from 'node:assert/strict';
import {
  openPage, visit, formWith, typeInto, submit, api, expectFigure, expectRate, resultScope,
  expectCautionVisible, followCsvLink, followJsonLink, closeBrowser, reportMissingHooks,
  screenshot, scheduleRows, plain,
} from './lib.mjs';
import { apiCsvHeader } from './jobs-common.mjs';

after(async () => {
  reportMissingHooks();
  await closeBrowser();
});

test('savings: type "1,000" opening, 250 a month at "4.5%" for 120 months; the page matches the API', async () => {
  const w = await openPage();
  try {
    const first = await visit(w.page, '/savings');
    assert.equal(first.status(), 200, '/savings answers 200');
    assert.match(first.headers()['content-type'] || '', /^text\/html/, '/savings is an HTML page (not there yet?)');
    const form = formWith(w.page, 'deposit');
    await typeInto(form, 'opening_balance', '1,000');
    await typeInto(form, 'deposit', '250');
    await typeInto(form, 'annual_rate_percent', '4.5%');
    await typeInto(form, 'term_months', '120');
    const { response, url } = await submit(w.page, form, '/savings');
    assert.equal(response.status(), 200, `the plan answers 200 (${url})`);

    const q = { opening_balance: '1000', deposit: '250', annual_rate_percent: '4.5', term_months: '120' };
    const a = await api('/api/v1/savings/plan', q);
    const s = a.summary;
    const scope = await resultScope(w.page, 'summary');
    for (const key of ['final_balance', 'total_deposited', 'total_interest', 'number_of_periods']) {
      await expectFigure(scope, key, s[key], '/savings');
    }
    await expectRate(scope, 'apy_percent', s.apy_percent, '/savings');
    await expectCautionVisible(w.page, '/savings result');

    const rows = await scheduleRows(w.page.locator('main'));
    assert.deepEqual(rows.map((r) => r.number), a.schedule.map((r) => r.number), 'the savings schedule shows every period');
    const last = a.schedule[a.schedule.length - 1];
    assert.ok(rows[rows.length - 1].cells.map(plain).includes(last.balance), `the last period's balance ${last.balance} is shown`);

    const linked = await followJsonLink(w.page, '/api/v1/savings/plan', '/savings');
    assert.deepEqual(linked.summary, s, 'the JSON link answers the same summary');
    const header = await apiCsvHeader('/api/v1/savings/plan.csv', q);
    await followCsvLink(w.page, header, '/savings');
    await screenshot(w.page, 'savings-typed');
    await w.assertClean('/savings');
  } finally {
    await w.close();
  }
});

test('savings: a goal of "25,000" with no deposit solves the deposit', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/savings');
    const form = formWith(w.page, 'deposit');
    await typeInto(form, 'deposit', '');
    await typeInto(form, 'goal', '25,000');
    await typeInto(form, 'annual_rate_percent', '3.75%');
    await typeInto(form, 'term_months', '60');
    const { response } = await submit(w.page, form, '/savings');
    assert.equal(response.status(), 200);
    const q = { goal: '25000', annual_rate_percent: '3.75', term_months: '60' };
    // The form may carry a default opening balance; use what the page submitted.
    const submitted = new URL(w.page.url()).searchParams.get('opening_balance');
    if (submitted && plain(submitted) !== '0') q.opening_balance = plain(submitted);
    const a = await api('/api/v1/savings/plan', q);
    const scope = await resultScope(w.page, 'summary');
    await expectFigure(scope, 'deposit', a.summary.deposit, '/savings goal');
    await expectFigure(scope, 'final_balance', a.summary.final_balance, '/savings goal');
    await w.assertClean('/savings goal');
  } finally {
    await w.close();
  }
});
