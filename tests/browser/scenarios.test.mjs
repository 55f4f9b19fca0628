// Every demo scenario is one click from the home page and opens a result with
// the caution visible; its API twin answers the same query.
import { test, after } from 'node:test';
import assert from 'node:assert/strict';
import { BASE, openPage, visit, expectCautionVisible, closeBrowser, screenshot } from './lib.mjs';

after(closeBrowser);

const TWINS = {
  '/loan': '/api/v1/loans/schedule',
  '/compare': '/api/v1/loans/compare',
  '/check': '/api/v1/loans/check',
  '/savings': '/api/v1/savings/plan',
};

async function scenarioLinks() {
  const w = await openPage();
  try {
    await visit(w.page, '/');
    const links = await w.page.evaluate((pages) =>
      [...document.querySelectorAll('main a[href]')]
        .map((a) => ({ href: a.getAttribute('href'), text: a.textContent.trim(), url: new URL(a.href) }))
        .filter((l) => pages.includes(l.url.pathname) && l.url.search.length > 1)
        .map(({ href, text }) => ({ href, text })),
      Object.keys(TWINS));
    return links;
  } finally {
    await w.close();
  }
}

test('the home page links every demo scenario (at least six) to a result page', async () => {
  const links = await scenarioLinks();
  assert.ok(links.length >= 6, `at least six demo scenarios link to a result page; found ${links.length}: ${JSON.stringify(links)}`);
});

test('each demo scenario opens a result in one click, caution visible, no error', async () => {
  const links = await scenarioLinks();
  assert.ok(links.length > 0, 'no scenario links on the home page');
  for (const [i, link] of links.entries()) {
    const w = await openPage();
    try {
      await visit(w.page, '/');
      const a = w.page.locator(`main a[href="${link.href.replace(/"/g, '\\"')}"]`).first();
      const [response] = await Promise.all([
        w.page.waitForResponse((r) => r.request().isNavigationRequest()),
        a.click(),
      ]);
      await w.page.waitForLoadState('load');
      const where = `scenario "${link.text}" (${link.href})`;
      assert.equal(response.status(), 200, `${where} answers 200`);
      const url = new URL(w.page.url());
      await expectCautionVisible(w.page, where);
      const errors = await w.page.locator('[aria-invalid="true"], .error-summary, [role="alert"]').count();
      assert.equal(errors, 0, `${where}: the result shows no field errors`);
      const twin = await fetch(`${BASE}${TWINS[url.pathname]}${url.search}`, { headers: { accept: 'application/json' } });
      assert.equal(twin.status, 200, `${where}: its API twin answers 200 for the same query (${await twin.text().then((t) => t.slice(0, 200))})`);
      await screenshot(w.page, `scenario-${i + 1}-${url.pathname.slice(1)}`);
      await w.assertClean(where);
    } finally {
      await w.close();
    }
  }
});
