/**
 * The HTTP side: the page (`web/`), plotly from node_modules (no CDN: works offline), and a small
 * JSON API — the demo cases, scenario validation with field paths, margins at a point, and the
 * downloads of a live session (replay scenario, trace CSV).
 */
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import express, { type NextFunction, type Request, type Response } from 'express';
import { z } from 'zod';
import { LinearizationError } from '../analysis/linearize.ts';
import { marginsAt } from '../analysis/margins.ts';
import { ScenarioError } from '../scenario/errors.ts';
import { type Scenario, parseScenario } from '../scenario/parse.ts';
import type { CaseLibrary } from './cases.ts';
import { CASE_NAME, LIVE_BOUNDS } from './protocol.ts';
import { hostGuard, sameOriginGuard, securityHeaders } from './security.ts';
import type { LiveSession } from './sessionPool.ts';
import { SessionError } from './session.ts';
import { jsonSafe } from './stability.ts';

export interface AppContext {
  webDir: string;
  cases: CaseLibrary;
  defaultCase: string;
  hostAllowed(host: string | undefined): boolean;
  session(id: string): LiveSession | undefined;
  sessionCount(): number;
  maxSessions: number;
}

export function plotlyPath(): string {
  const require = createRequire(import.meta.url);
  return join(dirname(require.resolve('plotly.js-dist-min/package.json')), 'plotly.min.js');
}

const marginsRequest = z
  .object({
    case: z.string().regex(CASE_NAME).optional(),
    text: z.string().min(1).max(LIVE_BOUNDS.scenarioTextMaxChars).optional(),
    at: z
      .object({
        fswHz: z.number().finite().min(LIVE_BOUNDS.fswHzMin).max(LIVE_BOUNDS.fswHzMax).optional(),
        deadTimeS: z.number().finite().min(0).max(LIVE_BOUNDS.deadTimeSMax).optional(),
        vDriveV: z.number().finite().min(LIVE_BOUNDS.vDriveVMin).max(LIVE_BOUNDS.vDriveVMax).optional(),
        loadROhm: z.number().finite().min(LIVE_BOUNDS.loadROhmMin).max(LIVE_BOUNDS.loadROhmMax).optional(),
        loadIA: z.number().finite().min(0).max(LIVE_BOUNDS.loadIAMax).optional(),
        tjHsC: z.number().finite().min(-60).max(300).optional(),
        tjLsC: z.number().finite().min(-60).max(300).optional(),
        kp: z.number().finite().min(0).max(LIVE_BOUNDS.kpMax).optional(),
        ki: z.number().finite().min(0).max(LIVE_BOUNDS.kiMax).optional(),
      })
      .strict()
      .optional(),
  })
  .strict()
  .refine((r) => (r.case === undefined) !== (r.text === undefined), { message: 'give exactly one of "case" (a name) or "text" (a scenario)' });

const validateRequest = z.object({ text: z.string().max(LIVE_BOUNDS.scenarioTextMaxChars) }).strict();

function problemsOf(e: z.ZodError): Array<{ path: string; message: string }> {
  return e.issues.map((i) => ({ path: i.path.map(String).join('.') || '(root)', message: i.message }));
}

export function createApp(ctx: AppContext): express.Express {
  const app = express();
  app.disable('x-powered-by');
  app.set('etag', 'strong');
  app.use(securityHeaders);
  app.use(hostGuard(ctx.hostAllowed));

  const plotly = plotlyPath();
  app.get('/vendor/plotly.min.js', (_req, res) => {
    res.setHeader('Cache-Control', 'public, max-age=3600');
    res.sendFile(plotly);
  });
  app.use(express.static(ctx.webDir, { index: 'index.html', dotfiles: 'ignore', redirect: false }));

  const api = express.Router();
  api.use(express.json({ limit: '256kb', type: 'application/json', strict: true }));

  api.get('/health', (_req, res) => {
    res.json({ ok: true, sessions: ctx.sessionCount(), maxSessions: ctx.maxSessions });
  });

  api.get('/cases', async (_req, res) => {
    res.json({ cases: await ctx.cases.list(), defaultCase: ctx.defaultCase });
  });

  api.get('/cases/:name', async (req, res) => {
    const name = String(req.params.name);
    const text = CASE_NAME.test(name) ? await ctx.cases.read(name) : undefined;
    if (text === undefined) {
      res.status(404).json({ error: `no case named ${JSON.stringify(name.slice(0, 64))}` });
      return;
    }
    res.json({ name, text });
  });

  api.post('/validate', sameOriginGuard, (req, res) => {
    const r = validateRequest.safeParse(req.body);
    if (!r.success) {
      res.status(400).json({ ok: false, problems: problemsOf(r.error) });
      return;
    }
    try {
      const sc = parseScenario(r.data.text);
      res.json({ ok: true, name: sc.name, topology: sc.topology, problems: [] });
    } catch (e) {
      if (!(e instanceof ScenarioError)) throw e;
      res.json({ ok: false, problems: e.problems.map((p) => ({ path: p.path, message: p.message })) });
    }
  });

  api.post('/margins', sameOriginGuard, async (req, res) => {
    const r = marginsRequest.safeParse(req.body);
    if (!r.success) {
      res.status(400).json({ ok: false, problems: problemsOf(r.error) });
      return;
    }
    let text = r.data.text;
    if (r.data.case !== undefined) {
      text = await ctx.cases.read(r.data.case);
      if (text === undefined) {
        res.status(404).json({ ok: false, problems: [{ path: 'case', message: `no case named ${JSON.stringify(r.data.case)}` }] });
        return;
      }
    }
    let sc: Scenario;
    try {
      sc = parseScenario(text!);
    } catch (e) {
      if (!(e instanceof ScenarioError)) throw e;
      res.status(400).json({ ok: false, problems: e.problems.map((p) => ({ path: p.path, message: p.message })) });
      return;
    }
    try {
      res.json({ ok: true, result: jsonSafe(marginsAt(sc, r.data.at ?? {})) });
    } catch (e) {
      if (e instanceof LinearizationError) {
        res.status(422).json({ ok: false, problems: [{ path: 'at', message: e.message }] });
        return;
      }
      if (e instanceof ScenarioError) {
        res.status(400).json({ ok: false, problems: e.problems.map((p) => ({ path: p.path, message: p.message })) });
        return;
      }
      throw e;
    }
  });

  const download = (what: 'replay' | 'trace') => async (req: Request, res: Response) => {
    const s = ctx.session(String(req.params.id));
    if (!s) {
      res.status(404).json({ error: 'no such live session (it ends when its page closes)' });
      return;
    }
    try {
      const out = await (what === 'replay' ? s.replay() : s.traceCsv());
      res.setHeader('Content-Disposition', `attachment; filename="${out.fileName.replace(/[^A-Za-z0-9._-]/g, '_')}"`);
      res.setHeader('Cache-Control', 'no-store');
      res.type(what === 'replay' ? 'application/yaml' : 'text/csv').send(out.text);
    } catch (e) {
      if (e instanceof SessionError) {
        res.status(409).json({ error: e.message });
        return;
      }
      throw e;
    }
  };
  api.get('/sessions/:id/replay.yaml', download('replay'));
  api.get('/sessions/:id/trace.csv', download('trace'));

  api.use((_req, res) => {
    res.status(404).json({ error: 'no such API route' });
  });
  app.use('/api', api);

  app.use((_req, res) => {
    res.status(404).type('text/plain').send('not found\n');
  });

  // Errors: a bad JSON body is the client's; anything else is ours, reported without internals.
  app.use((err: unknown, _req: Request, res: Response, _next: NextFunction) => {
    const e = err as { type?: string; status?: number; message?: string };
    if (e.type === 'entity.parse.failed' || e.type === 'entity.too.large' || e.status === 400 || e.status === 413) {
      res.status(e.status ?? 400).json({ ok: false, problems: [{ path: '(body)', message: e.message ?? 'bad request body' }] });
      return;
    }
    res.status(500).json({ ok: false, error: 'internal error' });
  });
  return app;
}
