// The check page: a quote typed as it reads on paper, checked against
// GET /api/v1/loans/check with the same query.
import { test, after } from 'node:test';
import assert from 'node:assert/strict';
import {
  openPage, visit, formWith, typeInto, submit, api, expectFigure, expectRate, resultScope,
  expectCautionVisible, followJsonLink, closeBrowser, reportMissingHooks, screenshot,
} from './lib.mjs';

after(async () => {
  reportMissingHooks();
  await closeBrowser();
});

test('check: type a quote, submit, the payment, APR, implied rate and verdict match the API', async () => {
  const w = await openPage();
  try {
    const first = await visit(w.page, '/check');
    assert.equal(first.status(), 200, '/check answers 200');
    assert.match(first.headers()['content-type'] || '', /^text\/html/, '/check is an HTML page (not there yet?)');
    const form = formWith(w.page, 'principal');
    await typeInto(form, 'principal', '250,000');
    await typeInto(form, 'annual_rate_percent', '6.5%');
    await typeInto(form, 'term_months', '360');
    await typeInto(form, 'quoted_payment', '1,580.17');
    await typeInto(form, 'quoted_apr_percent', '6.75%');
    // The charge as rows of ordinary fields: its name and its amount.
    await form.locator('input[name="charge_name"]').first().fill('origination');
    await form.locator('input[name="charge_amount"]').first().fill('2,500');
    const { response, url } = await submit(w.page, form, '/check');
    assert.equal(response.status(), 200, `the check answers 200 (${url})`);

    const q = {
      principal: '250000', annual_rate_percent: '6.5', term_months: '360',
      quoted_payment: '1580.17', quoted_apr_percent: '6.75', prepaid_finance_charges: 'origination:2500',
    };
    const a = await api('/api/v1/loans/check', q);
    const scope = await resultScope(w.page, 'summary');
    for (const key of ['computed_payment', 'number_of_payments', 'amount_financed', 'finance_charge', 'total_of_payments']) {
      await expectFigure(scope, key, a[key], '/check');
    }
    await expectRate(scope, 'apr_percent', a.apr_percent_full, '/check');
    await expectRate(scope, 'implied_annual_rate_percent', a.implied_annual_rate_percent, '/check');

    // The verdicts in words: the payment matches; the APR is outside the tolerance.
    const text = await w.page.locator('main').innerText();
    assert.equal(a.payment_matches, true);
    assert.equal(a.apr_within_tolerance, false);
    assert.match(text, /\bmatch(es)?\b/i, 'the page says the quoted payment matches');
    assert.match(text, /(not within|outside|beyond|exceeds)[^.]*toleran/i, 'the page says the quoted APR is outside the tolerance, in words');
    assert.ok(text.includes('1026.22'), 'the reasoning names the rule (§1026.22)');
    await expectCautionVisible(w.page, '/check result');
    const linked = await followJsonLink(w.page, '/api/v1/loans/check', '/check');
    assert.equal(linked.apr_percent_full, a.apr_percent_full, 'the JSON link answers the same check');
    await screenshot(w.page, 'check-typed');
    await w.assertClean('/check');
  } finally {
    await w.close();
  }
});

test('check: a quote within tolerance says so', async () => {
  const q = { principal: '250000', annual_rate_percent: '6.5', term_months: '360', quoted_payment: '1580.17', quoted_apr_percent: '6.5' };
  const w = await openPage();
  try {
    const r = await visit(w.page, `/check?${new URLSearchParams(q)}`);
    assert.equal(r.status(), 200);
    const a = await api('/api/v1/loans/check', q);
    assert.equal(a.apr_within_tolerance, true);
    const text = await w.page.locator('main').innerText();
    assert.match(text, /within[^.]*toleran/i, 'the page says the APR is within the tolerance');
    assert.doesNotMatch(text, /(not within|outside)[^.]*toleran/i, 'and does not say it is outside');
    await w.assertClean('/check within');
  } finally {
    await w.close();
  }
});
