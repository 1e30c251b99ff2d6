/** The HTTP side: security headers, static page and plotly from node_modules, the JSON API. */
import { readFileSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../src/server/server.ts';
import { testServer } from './helpers.ts';

let s: RunningServer;
beforeAll(async () => {
  s = await testServer();
});
afterAll(async () => {
  await s?.close();
});

const post = (path: string, body: unknown, headers: Record<string, string> = {}) =>
  fetch(`${s.url}${path}`, { method: 'POST', headers: { 'Content-Type': 'application/json', ...headers }, body: typeof body === 'string' ? body : JSON.stringify(body) });

describe('the page', () => {
  it('is served with a self-only CSP, nosniff, no framing and no referrer', async () => {
    const r = await fetch(s.url);
    expect(r.status).toBe(200);
    expect(await r.text()).toMatch(/lossdial/);
    const csp = r.headers.get('content-security-policy')!;
    expect(csp).toMatch(/default-src 'self'/);
    expect(csp).toMatch(/script-src 'self'/);
    expect(csp).toMatch(/frame-ancestors 'none'/);
    expect(csp).not.toMatch(/unsafe-inline|unsafe-eval|https?:/);
    expect(r.headers.get('x-content-type-options')).toBe('nosniff');
    expect(r.headers.get('referrer-policy')).toBe('no-referrer');
    expect(r.headers.get('x-powered-by')).toBeNull();
  });

  it('gets plotly from node_modules, not a CDN', async () => {
    const r = await fetch(`${s.url}vendor/plotly.min.js`);
    expect(r.status).toBe(200);
    expect((await r.text()).length).toBeGreaterThan(1e6);
    const html = readFileSync(new URL('../../web/index.html', import.meta.url), 'utf8');
    expect(html).not.toMatch(/https?:\/\//);
  });

  it('never serves files outside web/', async () => {
    for (const p of ['..%2Fpackage.json', '%2e%2e/package.json', 'vendor/..%2F..%2Fpackage.json', 'api/cases/..%2F..%2Fpackage', 'api/cases/%2Fetc%2Fpasswd']) {
      const r = await fetch(`${s.url}${p}`);
      expect(r.status, p).toBeGreaterThanOrEqual(400);
      expect(await r.text(), p).not.toMatch(/"name": "lossdial"/);
    }
  });
});

describe('the API', () => {
  it('lists the demo cases and returns one by name', async () => {
    const list = await (await fetch(`${s.url}api/cases`)).json();
    expect(list.cases).toContain('buck-cabin-warmup');
    const one = await (await fetch(`${s.url}api/cases/buck-aux-48v`)).json();
    expect(one.text).toMatch(/name: buck-aux-48v/);
    expect((await fetch(`${s.url}api/cases/nope`)).status).toBe(404);
  });

  it('validates scenario text and reports problems with their field paths', async () => {
    const text = readFileSync(new URL('../../cases/buck-aux-48v.yaml', import.meta.url), 'utf8');
    const ok = await (await post('api/validate', { text })).json();
    expect(ok).toMatchObject({ ok: true, name: 'buck-aux-48v', problems: [] });
    const bad = await (await post('api/validate', { text: text.replace('fswHz: 100000', 'fswHz: -1').replace('lH: 12.0e-6', 'lH: 12.0e-6\n    colour: red') })).json();
    expect(bad.ok).toBe(false);
    const paths = bad.problems.map((p: { path: string }) => p.path);
    expect(paths).toContain('pwm.fswHz');
    expect(paths).toContain('buck.inductor.colour');
    const syntax = await (await post('api/validate', { text: 'name: [unclosed' })).json();
    expect(syntax.problems[0].path).toBe('(syntax)');
    expect((await post('api/validate', '{"text": ')).status).toBe(400);
    expect((await post('api/validate', { text: 1 })).status).toBe(400);
  });

  it('computes margins at a point for a case, with overrides validated', async () => {
    const r = await (await post('api/margins', { case: 'buck-aux-48v', at: { fswHz: 200e3, tjHsC: 40, tjLsC: 40 } })).json();
    expect(r.ok).toBe(true);
    expect(r.result.point.fswHz).toBe(200e3);
    expect(r.result.bases.continuous.pmDeg).toBeGreaterThan(0);
    const bad = await post('api/margins', { case: 'buck-aux-48v', at: { fswHz: -1 } });
    expect(bad.status).toBe(400);
    expect((await post('api/margins', { case: '../etc' })).status).toBe(400);
    expect((await post('api/margins', {})).status).toBe(400);
  });

  it('refuses API posts from a foreign page', async () => {
    const r = await post('api/validate', { text: 'name: x' }, { Origin: 'http://evil.example' });
    expect(r.status).toBe(403);
  });
});
