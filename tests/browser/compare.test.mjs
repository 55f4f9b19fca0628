// The compare page: three terms side by side, typed like a person, read back
// against GET /api/v1/loans/compare with the same query.
import { test, after } from 'node:test';
import assert from 'node:assert/strict';
import {
  openPage, visit, formWith, typeInto, submit, api, expectFigure, expectCautionVisible,
  followCsvLink, followJsonLink, closeBrowser, reportMissingHooks, screenshot, missingHooks,
} from './lib.mjs';
import { apiCsvHeader } from './jobs-common.mjs';

after(async () => {
  reportMissingHooks();
  await closeBrowser();
});

const QUERY = { principal: '278000', annual_rate_percent: '6.375', term_months: '180,240,360' };

/** One scope per plan: `[data-plan]` elements when the page marks them, else the whole of <main>. */
async function planScopes(page, n) {
  const marked = page.locator('main [data-plan]');
  if ((await marked.count()) === n) return Array.from({ length: n }, (_, i) => marked.nth(i));
  missingHooks.add('/compare: [data-plan] on each plan\'s row or column');
  const rows = page.locator('main table tbody tr');
  if ((await rows.count()) === n) return Array.from({ length: n }, (_, i) => rows.nth(i));
  return Array.from({ length: n }, () => page.locator('main').first());
}

test('compare: type the loan and three terms, submit, each plan shows what the API answers', async () => {
  const w = await openPage();
  try {
    const first = await visit(w.page, '/compare');
    assert.equal(first.status(), 200, '/compare answers 200');
    assert.match(first.headers()['content-type'] || '', /^text\/html/, '/compare is an HTML page (not there yet?)');
    const form = formWith(w.page, 'principal');
    await typeInto(form, 'principal', '278,000');
    await typeInto(form, 'annual_rate_percent', '6.375%');
    await typeInto(form, 'term_months', '180, 240, 360');
    const { response, url } = await submit(w.page, form, '/compare');
    assert.equal(response.status(), 200, `the comparison answers 200 (${url})`);
    assert.equal(await formWith(w.page, 'principal').locator('[name="principal"]').inputValue(), '278,000', 'the form keeps its values');

    const answer = await api('/api/v1/loans/compare', QUERY);
    assert.equal(answer.rows.length, 3);
    const scopes = await planScopes(w.page, answer.rows.length);
    for (const [i, row] of answer.rows.entries()) {
      const keys = ['payment', 'number_of_payments', 'total_interest', 'total_paid'];
      if (i > 0) keys.push('interest_saved', 'payments_saved');
      for (const key of keys) {
        await expectFigure(scopes[i], key, row[key], `/compare plan ${i + 1} (${row.label})`);
      }
    }
    await expectCautionVisible(w.page, '/compare result');

    // The balance chart: one line per plan.
    const lines = await w.page.locator('main svg polyline, main svg path.line').count();
    assert.ok(lines >= answer.rows.length, `the balance chart has one line per plan (found ${lines})`);

    const linked = await followJsonLink(w.page, '/api/v1/loans/compare', '/compare');
    assert.deepEqual(linked.rows, answer.rows, 'the JSON link answers the same rows');
    const header = await apiCsvHeader('/api/v1/loans/compare.csv', QUERY);
    const { body } = await followCsvLink(w.page, header, '/compare');
    assert.equal(body.trim().split(/\r?\n/).length, 1 + answer.rows.length, 'the CSV has one line per plan');
    await screenshot(w.page, 'compare-typed');
    await w.assertClean('/compare');
  } finally {
    await w.close();
  }
});

test('compare: a shared URL with a label shows the label', async () => {
  const q = { principal: '250000', annual_rate_percent: '6.5', term_months: '360', label: 'Cottage on Heron Lane' };
  const w = await openPage();
  try {
    const r = await visit(w.page, `/compare?${new URLSearchParams(q)}`);
    assert.equal(r.status(), 200);
    const answer = await api('/api/v1/loans/compare', q);
    assert.ok((await w.page.locator('main').innerText()).includes('Cottage on Heron Lane'), 'the label is shown');
    await expectFigure(w.page.locator('main'), 'payment', answer.rows[0].payment, '/compare labelled');
    await w.assertClean('/compare labelled');
  } finally {
    await w.close();
  }
});
