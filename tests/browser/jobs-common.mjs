// Pieces the job tests share: the expected CSV header straight from the API.
import { BASE } from './lib.mjs';

/** The header row of an API CSV answer for a query. */
export async function apiCsvHeader(pathname, query) {
  const r = await fetch(`${BASE}${pathname}?${new URLSearchParams(query)}`);
  const body = await r.text();
  if (r.status !== 200) throw new Error(`GET ${pathname} answered ${r.status}: ${body.slice(0, 300)}`);
  return body.split(/\r?\n/)[0];
}
