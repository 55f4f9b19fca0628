// Every page: loads from the server alone, logs no error, carries the CSP and no
// inline script, shows the caution where a result is, prints without navigation
// or forms, and is photographed into screenshots/.
import { test, after } from 'node:test';
import assert from 'node:assert/strict';
import {
  BASE, openPage, visit, screenshot, closeBrowser, pageExists, expectCautionVisible,
  reportMissingHooks,
} from './lib.mjs';
import { PAGES } from './pages.mjs';


const allowMissing = process.env.RESIDUE_BROWSER_ALLOW_MISSING === '1';

after(async () => {
  reportMissingHooks();
  await closeBrowser();
});

for (const p of PAGES) {
  test(`page ${p.path}: loads cleanly, CSP, no inline script, screenshot`, async (t) => {
    if (allowMissing && !(await pageExists(p.path.split('?')[0]))) return t.skip('page not there yet');
    const w = await openPage();
    try {
      const response = await visit(w.page, p.path);
      assert.equal(response.status(), 200, `${p.path} answers 200`);
      assert.match(response.headers()['content-type'] || '', /^text\/html/, `${p.path} is HTML`);
      const csp = response.headers()['content-security-policy'] || '';
      assert.ok(csp, `${p.path}: a Content-Security-Policy header is present`);
      const scriptSrc = (csp.match(/(?:^|;)\s*script-src([^;]*)/) || [])[1];
      const defaultSrc = (csp.match(/(?:^|;)\s*default-src([^;]*)/) || [])[1];
      const effective = scriptSrc ?? defaultSrc;
      assert.ok(effective !== undefined, `${p.path}: the CSP restricts scripts (script-src or default-src): ${csp}`);
      assert.doesNotMatch(effective, /'unsafe-inline'|'unsafe-eval'|\*/, `${p.path}: the CSP forbids inline scripts: ${csp}`);
      const inline = await w.page.evaluate(() => ({
        scripts: [...document.querySelectorAll('script:not([src])')].filter((s) => s.textContent.trim()).length,
        handlers: [...document.querySelectorAll('*')].flatMap((el) =>
          [...el.attributes].filter((a) => /^on/i.test(a.name)).map((a) => `${el.tagName.toLowerCase()}[${a.name}]`)),
        styleAttrs: [...document.querySelectorAll('[style]')].map((el) => el.tagName.toLowerCase()),
        foreign: [...document.querySelectorAll('[src], link[href]')]
          .map((el) => el.getAttribute('src') || el.getAttribute('href'))
          .filter((u) => /^(https?:)?\/\//i.test(u) && !u.startsWith(location.origin)),
        lang: document.documentElement.lang,
        title: document.title,
        h1: document.querySelectorAll('h1').length,
      }));
      assert.equal(inline.scripts, 0, `${p.path}: no inline <script> (the CSP would block it)`);
      assert.deepEqual(inline.handlers, [], `${p.path}: no inline event handlers (the CSP would block them)`);
      assert.deepEqual(inline.styleAttrs, [], `${p.path}: no style="" attributes (style-src 'self' blocks them)`);
      assert.deepEqual(inline.foreign, [], `${p.path}: no resource from another origin`);
      assert.ok(inline.lang, `${p.path}: <html lang> is set`);
      assert.ok(inline.title.trim(), `${p.path}: the page has a title`);
      assert.equal(inline.h1, 1, `${p.path}: exactly one <h1>`);
      if (p.caution) await expectCautionVisible(w.page, p.path);
      await screenshot(w.page, p.name);
      await w.assertClean(p.path);
    } finally {
      await w.close();
    }
  });

  test(`page ${p.path}: print stylesheet hides navigation and forms${p.caution ? ', keeps the caution' : ''}`, async (t) => {
    if (allowMissing && !(await pageExists(p.path.split('?')[0]))) return t.skip('page not there yet');
    const w = await openPage();
    try {
      await visit(w.page, p.path);
      await w.page.emulateMedia({ media: 'print' });
      const shown = await w.page.evaluate(() => {
        const rendered = (el) => getComputedStyle(el).display !== 'none' && el.getClientRects().length > 0;
        return [...document.querySelectorAll('nav, form, button, input[type="submit"]')]
          .filter(rendered)
          .map((el) => `${el.tagName.toLowerCase()}${el.id ? `#${el.id}` : ''}${el.className ? `.${String(el.className).split(' ').join('.')}` : ''} (display: ${getComputedStyle(el).display})`);
      });
      assert.deepEqual(shown, [], `${p.path}: in print, navigation, forms and buttons are not shown`);
      if (p.caution) {
        await expectCautionVisible(w.page, `${p.path} (print)`);
        const dated = await w.page.evaluate(() =>
          [...document.querySelectorAll('body *')].some((el) =>
            el.children.length === 0 && el.getClientRects().length > 0 && getComputedStyle(el).visibility !== 'hidden' &&
            /\b\d{4}-\d{2}-\d{2}\b/.test(el.textContent) && /prepared|printed|dated/i.test(el.textContent)));
        if (p.name !== 'home') assert.ok(dated, `${p.path} (print): the printout is dated ("Prepared … YYYY-MM-DD")`);
      }
      await screenshot(w.page, `${p.name}-print`);
      await w.assertClean(p.path);
    } finally {
      await w.close();
    }
  });
}

test('the CSP is enforced: an inline script added to a page does not run', async (t) => {
  const w = await openPage();
  try {
    await visit(w.page, '/');
    const result = await w.page.evaluate(
      () =>
        new Promise((resolve) => {
          let violated = false;
          document.addEventListener('securitypolicyviolation', () => {
            violated = true;
          });
          window.__ran = false;
          const s = document.createElement('script');
          s.textContent = 'window.__ran = true;';
          document.body.appendChild(s);
          setTimeout(() => resolve({ ran: window.__ran, violated }), 50);
        }),
    );
    assert.equal(result.ran, false, 'an inline script must not run under the CSP');
    assert.equal(result.violated, true, 'the browser reports a securitypolicyviolation for it');
    // (this page is expected to log the violation; it is not checked for console errors)
  } finally {
    await w.close();
  }
});

test('a label with markup is shown as text, never as markup', async (t) => {
  const label = '<b id="injected">Bold</b><img src=x id="injected-img"> & "quotes"';
  const targets = [
    `/compare?principal=250000&annual_rate_percent=6.5&term_months=360&label=${encodeURIComponent(label)}`,
    `/loan?principal=250000&annual_rate_percent=6.5&term_months=360&label=${encodeURIComponent(label)}`,
  ];
  for (const path of targets) {
    if (allowMissing && !(await pageExists(path.split('?')[0]))) continue;
    const w = await openPage();
    try {
      const response = await visit(w.page, path);
      assert.equal(response.status(), 200, `${path} answers 200`);
      assert.equal(await w.page.locator('#injected, #injected-img').count(), 0, `${path}: the label's markup became elements`);
      const text = await w.page.locator('main').innerText();
      assert.ok(text.includes('<b id="injected">Bold</b>'), `${path}: the label is shown as text, markup and all`);
      await w.assertClean(path);
    } finally {
      await w.close();
    }
  }
});

test('first paint of the 360-payment schedule page (recorded, not asserted)', async (t) => {
  if (allowMissing && !(await pageExists('/loan'))) return t.skip('page not there yet');
  const path = '/loan?principal=250000&annual_rate_percent=7.125&term_months=360';
  const bytes = (await (await fetch(BASE + path)).arrayBuffer()).byteLength;
  const runs = [];
  for (let i = 0; i < 3; i++) {
    const w = await openPage();
    try {
      const response = await visit(w.page, path);
      assert.equal(response.status(), 200);
      // Paint entries arrive when the frame is presented, which can be after 'load':
      // wait for them (buffered), at most 3 s.
      const paint = await w.page.evaluate(
        () =>
          new Promise((resolve) => {
            const answer = () => {
              const p = Object.fromEntries(performance.getEntriesByType('paint').map((e) => [e.name, e.startTime]));
              const nav = performance.getEntriesByType('navigation')[0];
              return { fp: p['first-paint'], fcp: p['first-contentful-paint'], ttfb: nav ? nav.responseStart : null };
            };
            const ready = () => {
              const a = answer();
              return a.fp !== undefined && a.fcp !== undefined;
            };
            if (ready()) return resolve(answer());
            const po = new PerformanceObserver(() => {
              if (ready()) {
                po.disconnect();
                resolve(answer());
              }
            });
            po.observe({ type: 'paint', buffered: true });
            setTimeout(() => {
              po.disconnect();
              resolve(answer());
            }, 3000);
          }),
      );
      runs.push(paint);
    } finally {
      await w.close();
    }
  }
  const fmt = (v) => (typeof v === 'number' ? v.toFixed(1) : String(v));
  // The first run includes the browser's warm-up; the last is the steady figure.
  const last = runs[runs.length - 1];
  console.log(`first-paint /loan 360: ${fmt(last.fp)} ms (first-contentful-paint ${fmt(last.fcp)} ms, response start ${fmt(last.ttfb)} ms; runs: ${runs.map((r) => fmt(r.fp)).join(', ')} ms; HTML ${bytes} bytes)`);
  assert.ok(runs.every((r) => typeof r.fp === 'number'), 'the browser reports a first paint');
});

test('an icon: the pages declare one, or /favicon.ico answers (a browser asks, and a 404 logs a console error)', async () => {
  const html = await (await fetch(`${BASE}/`)).text();
  const declared = html.match(/<link[^>]+rel="(?:shortcut )?icon"[^>]*href="([^"]+)"/i);
  const iconUrl = declared ? new URL(declared[1], `${BASE}/`).toString() : `${BASE}/favicon.ico`;
  if (iconUrl.startsWith('data:')) return;
  const r = await fetch(iconUrl);
  assert.equal(r.status, 200, `the icon ${iconUrl} answers ${r.status}; Chromium requests it on every page and logs "Failed to load resource" when it is missing`);
});
