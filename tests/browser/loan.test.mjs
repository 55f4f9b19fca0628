// The loan schedule page, used like a loan officer would: type the loan as a
// person writes it, submit, and read the figures back against the JSON API.
import { test, after } from 'node:test';
import assert from 'node:assert/strict';
import {
  openPage, visit, formWith, typeInto, submit, api, expectFigure, resultScope,
  expectCautionVisible, followCsvLink, followJsonLink, closeBrowser, reportMissingHooks,
  scheduleRows, grouped, screenshot, plain,
} from './lib.mjs';

after(async () => {
  reportMissingHooks();
  await closeBrowser();
});

const CSV_HEADER = 'number,date,payment,extra,interest,principal,balance';

test('loan: type "250,000" and "6.5%", submit, the page shows what the API answers', async () => {
  const w = await openPage();
  try {
    const first = await visit(w.page, '/loan');
    assert.equal(first.status(), 200, '/loan answers 200');
    assert.match(first.headers()['content-type'] || '', /^text\/html/, '/loan is an HTML page (not there yet?)');
    const form = formWith(w.page, 'principal');
    await typeInto(form, 'principal', '250,000');
    await typeInto(form, 'annual_rate_percent', '6.5%');
    await typeInto(form, 'term_months', '360');
    const { response, url } = await submit(w.page, form, '/loan');
    assert.equal(response.status(), 200, `the result page answers 200 (${url})`);
    assert.equal(url.searchParams.get('principal'), '250,000', 'the URL keeps what was typed');
    assert.equal(url.searchParams.get('annual_rate_percent'), '6.5%');

    // The form keeps its values.
    assert.equal(await formWith(w.page, 'principal').locator('[name="principal"]').inputValue(), '250,000');
    assert.equal(await formWith(w.page, 'principal').locator('[name="annual_rate_percent"]').inputValue(), '6.5%');

    const answer = await api('/api/v1/loans/schedule', { principal: '250000', annual_rate_percent: '6.5', term_months: '360' });
    const s = answer.summary;
    const summary = await resultScope(w.page, 'summary');
    for (const key of ['payment', 'number_of_payments', 'total_interest', 'total_paid', 'final_payment']) {
      await expectFigure(summary, key, s[key], '/loan summary');
    }
    await expectCautionVisible(w.page, '/loan result');

    // The schedule: every payment, grouped by year, the first and last rows as posted.
    const rows = await scheduleRows(w.page.locator('main'));
    assert.deepEqual(rows.map((r) => r.number), answer.schedule.map((r) => r.number), 'the schedule shows every payment, in order');
    for (const i of [0, 11, 12, answer.schedule.length - 1]) {
      const want = answer.schedule[i];
      const got = rows[i].cells.map(plain);
      for (const key of ['payment', 'interest', 'principal', 'balance']) {
        assert.ok(got.includes(want[key]), `schedule row ${want.number}: ${key} ${want[key]} not among ${JSON.stringify(rows[i].cells)}`);
      }
    }
    // Grouped by year: one table (or folded section) per year with a subtotal.
    const years = await w.page.locator('main details').count();
    assert.ok(years >= 30, `a 360-payment schedule is folded by year (found ${years} <details>)`);

    // Charts are server-rendered SVG with a text alternative.
    const charts = await w.page.evaluate(() =>
      [...document.querySelectorAll('main svg')].map((svg) => ({
        role: svg.getAttribute('role'),
        name: svg.getAttribute('aria-label') || svg.getAttribute('aria-labelledby') || (svg.querySelector('title') || {}).textContent || '',
      })),
    );
    assert.ok(charts.length >= 2, `the balance and yearly split charts are SVG (found ${charts.length})`);
    for (const c of charts) assert.ok(c.name.trim(), 'every chart has an accessible name');
    // The lines and bars are drawn: a stroke or a fill the eye can see.
    const undrawn = await w.page.evaluate(() =>
      [...document.querySelectorAll('main svg polyline, main svg rect[class^="bar"]')]
        .filter((el) => {
          const cs = getComputedStyle(el);
          return el.tagName === 'polyline' ? cs.stroke === 'none' || cs.strokeWidth === '0px' : cs.fill === 'none';
        })
        .map((el) => `${el.tagName}.${el.getAttribute('class')}`));
    assert.deepEqual([...new Set(undrawn)], [], 'every chart line has a stroke and every bar a fill');
    const barFills = await w.page.evaluate(() =>
      [...new Set([...document.querySelectorAll('main svg rect.bar-lower, main svg rect.bar-upper')].map((el) => `${el.getAttribute('class')}:${getComputedStyle(el).fill}`))]);
    const lower = barFills.filter((f) => f.startsWith('bar-lower')).map((f) => f.split(':').slice(1).join(':'));
    const upper = barFills.filter((f) => f.startsWith('bar-upper')).map((f) => f.split(':').slice(1).join(':'));
    if (lower.length && upper.length) assert.notDeepEqual(lower, upper, 'interest and principal bars are told apart');

    // The derivation in MathML.
    assert.ok((await w.page.locator('main math').count()) > 0, 'the derivation is typeset in MathML');

    // The same result as JSON and CSV.
    const linked = await followJsonLink(w.page, '/api/v1/loans/schedule', '/loan');
    assert.deepEqual(linked.summary, s, 'the JSON link answers the same summary');
    const { body } = await followCsvLink(w.page, CSV_HEADER, '/loan');
    const lines = body.trim().split(/\r?\n/);
    assert.equal(lines.length, 1 + answer.schedule.length, 'the CSV has one line per payment');
    await screenshot(w.page, 'loan-typed');
    await w.assertClean('/loan');
  } finally {
    await w.close();
  }
});

test('loan: the payment given, the page solves the number of payments', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/loan');
    const form = formWith(w.page, 'principal');
    await typeInto(form, 'principal', '$14,750');
    await typeInto(form, 'annual_rate_percent', '8.9 %');
    await typeInto(form, 'term_months', '');
    await typeInto(form, 'payment', '305.47');
    const { response } = await submit(w.page, form, '/loan');
    assert.equal(response.status(), 200);
    const answer = await api('/api/v1/loans/schedule', { principal: '14750', annual_rate_percent: '8.9', payment: '305.47' });
    const summary = await resultScope(w.page, 'summary');
    for (const key of ['payment', 'number_of_payments', 'total_interest', 'final_payment']) {
      await expectFigure(summary, key, answer.summary[key], '/loan (payment given)');
    }
    await w.assertClean('/loan payment given');
  } finally {
    await w.close();
  }
});

test('loan: a bad amount is shown next to its field, in words, with the form kept', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/loan');
    const form = formWith(w.page, 'principal');
    await typeInto(form, 'principal', 'two hundred');
    await typeInto(form, 'annual_rate_percent', '6.5%');
    await typeInto(form, 'term_months', '360');
    const { response } = await submit(w.page, form, '/loan');
    assert.equal(response.status(), 422, 'an invalid form answers its page with 422');
    assert.match(response.headers()['content-type'] || '', /^text\/html/, 'the answer is the page, not problem JSON');
    const field = formWith(w.page, 'principal').locator('[name="principal"]');
    assert.equal(await field.inputValue(), 'two hundred', 'the form keeps what was typed');
    assert.equal(await formWith(w.page, 'principal').locator('[name="annual_rate_percent"]').inputValue(), '6.5%');
    assert.equal(await field.getAttribute('aria-invalid'), 'true', 'the field is marked invalid');
    const described = (await field.getAttribute('aria-describedby')) || '';
    const messages = [];
    for (const id of described.split(/\s+/).filter(Boolean)) {
      const el = w.page.locator(`[id="${id}"]`);
      if ((await el.count()) > 0) messages.push((await el.innerText()).trim());
    }
    assert.ok(messages.some((m) => /number|amount|digits/i.test(m)), `the field's description says what is wrong: ${JSON.stringify(messages)}`);
    const errorVisible = await w.page.evaluate(() => {
      const input = document.querySelector('[name="principal"]');
      const ids = (input.getAttribute('aria-describedby') || '').split(/\s+/);
      return ids.some((id) => {
        const el = document.getElementById(id);
        return el && el.getClientRects().length > 0 && /number|amount|digits/i.test(el.textContent);
      });
    });
    assert.ok(errorVisible, 'the error is visible next to the field');
    await screenshot(w.page, 'loan-error');
    await w.assertClean('/loan error');
  } finally {
    await w.close();
  }
});

test('loan: keyboard only, the form is reachable and submits with Enter', async () => {
  const w = await openPage();
  try {
    await visit(w.page, '/loan');
    const field = formWith(w.page, 'principal').locator('[name="principal"]');
    // Tab from the top of the page until the amount field has the focus.
    let reached = false;
    for (let i = 0; i < 40 && !reached; i++) {
      await w.page.keyboard.press('Tab');
      reached = await field.evaluate((el) => el === document.activeElement);
    }
    assert.ok(reached, 'the loan amount field is reachable with Tab');
    await w.page.keyboard.press('ControlOrMeta+a');
    await w.page.keyboard.type('100,000');
    const rate = formWith(w.page, 'principal').locator('[name="annual_rate_percent"]');
    await rate.focus();
    await w.page.keyboard.press('ControlOrMeta+a');
    await w.page.keyboard.type('6');
    const term = formWith(w.page, 'principal').locator('[name="term_months"]');
    await term.focus();
    await w.page.keyboard.press('ControlOrMeta+a');
    await w.page.keyboard.type('360');
    await Promise.all([w.page.waitForURL(/principal=100%2C000|principal=100,000/), w.page.keyboard.press('Enter')]);
    await w.page.waitForLoadState('load');
    await expectFigure(await resultScope(w.page, 'summary'), 'payment', '599.55', '/loan via keyboard');
    await w.assertClean('/loan keyboard');
  } finally {
    await w.close();
  }
});

test('loan: a shared URL shows the result its API twin answers (7.125 %, 360 months)', async () => {
  const q = { principal: '250000', annual_rate_percent: '7.125', term_months: '360' };
  const w = await openPage();
  try {
    const r = await visit(w.page, `/loan?${new URLSearchParams(q)}`);
    assert.equal(r.status(), 200);
    const answer = await api('/api/v1/loans/schedule', q);
    const summary = await resultScope(w.page, 'summary');
    await expectFigure(summary, 'payment', answer.summary.payment, '/loan shared URL');
    await expectFigure(summary, 'total_interest', answer.summary.total_interest, '/loan shared URL');
    assert.ok((await w.page.locator('main').innerText()).includes(grouped(answer.summary.payment)), 'the payment is written with thousands grouped');
    await w.assertClean('/loan shared URL');
  } finally {
    await w.close();
  }
});
