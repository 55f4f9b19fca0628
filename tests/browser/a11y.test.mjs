// axe-core in the browser on every page: no serious or critical violation.
// axe is injected as a script, which the pages' CSP forbids, so these contexts
// bypass the CSP (the other tests keep it).
import { test, after } from 'node:test';
import assert from 'node:assert/strict';
import { openPage, visit, axeViolations, closeBrowser, pageExists } from './lib.mjs';
import { PAGES } from './pages.mjs';

after(closeBrowser);

const allowMissing = process.env.RESIDUE_BROWSER_ALLOW_MISSING === '1';
const EXTRA = [
  { name: 'loan-error', path: '/loan?principal=two+hundred&annual_rate_percent=6.5%25&term_months=360' },
  { name: 'loan-dated', path: '/loan?principal=31500&annual_rate_percent=7.9&term_months=72&funding_date=2026-03-15&first_payment_date=2026-05-01&extra_payments=100@13-' },
];

for (const p of [...PAGES, ...EXTRA]) {
  for (const media of ['screen', 'print']) {
    test(`axe ${media}: ${p.path}`, async (t) => {
      if (allowMissing && !(await pageExists(p.path.split('?')[0]))) return t.skip('page not there yet');
      const w = await openPage({ bypassCSP: true });
      try {
        await visit(w.page, p.path);
        if (media === 'print') await w.page.emulateMedia({ media: 'print' });
        const violations = await axeViolations(w.page);
        for (const v of violations) {
          console.log(`axe ${media} ${p.path}: [${v.impact}] ${v.id}: ${v.help} (${v.count} element${v.count === 1 ? '' : 's'})`);
          for (const n of v.nodes) console.log(`    ${n.target}: ${(n.summary || '').replace(/\s+/g, ' ').slice(0, 300)}`);
        }
        const bad = violations.filter((v) => v.impact === 'serious' || v.impact === 'critical');
        assert.deepEqual(bad.map((v) => `${v.impact} ${v.id}: ${v.help}`), [], `${p.path} (${media}): no serious or critical accessibility violations`);
      } finally {
        await w.close();
      }
    });
  }
}
