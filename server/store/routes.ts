/**
 * The store's HTTP routes (mounted under /api): scenarios and their versions, diffs, soft
 * delete and restore, runs and issued reports. Answers and errors as the rest of the API:
 * JSON, problems as { path, message }. A store that cannot be used answers 503 with why.
 */
import express, { type Request, type RequestHandler, type Response } from 'express';
import type { z } from 'zod';
import { diffJson } from '../../models/scenario/diff.ts';
import { formatPath, type Problem } from '../../models/scenario/problems.ts';
import type { StoreHandle } from './handle.ts';
import type { Db } from './open.ts';
import { metadataSchema, newScenarioSchema, newVersionSchema } from './records.ts';
import { reportPdf, reportsOfScenario, reportsWithFingerprint } from './reports.ts';
import { listRuns, readRun } from './runs.ts';
import {
  createScenario,
  listScenarios,
  listVersions,
  readVersion,
  saveVersion,
  scenarioSummary,
  setDeleted,
  updateMetadata,
  versionsWithFingerprint,
  type StoreOutcome,
} from './scenarios.ts';

/** The scenario checked as a run would read it: null when valid, else the answer to send. */
export type Validate = (scenario: unknown) => Promise<{ status: number; problems: Problem[] } | null>;

export interface StoreRouteOptions {
  handle: StoreHandle;
  validate: Validate;
  /** The JSON body handlers of the app (same-origin check, content type, parse, depth). */
  json: RequestHandler[];
  /** Same-origin check for the DELETE route (it has no body). */
  sameOrigin: RequestHandler;
}

function send(res: Response, status: number, problems: Problem[], extra: Record<string, unknown> = {}): void {
  res.status(status).type('application/json').set('Cache-Control', 'no-store').send(JSON.stringify({ problems, ...extra }));
}

function sendJson(res: Response, status: number, body: unknown): void {
  res.status(status).type('application/json').set('Cache-Control', 'no-store').send(JSON.stringify(body));
}

function zodProblems(error: z.ZodError): Problem[] {
  return error.issues.map((i) => ({ path: formatPath(i.path), message: i.message }));
}

/** A route's id or version number: a positive whole number. */
function positive(text: unknown): number | null {
  const s = String(text);
  return /^[1-9]\d{0,15}$/.test(s) ? Number(s) : null;
}

function failure<T>(res: Response, outcome: StoreOutcome<T> & { ok: false }): void {
  send(res, outcome.status, [{ path: outcome.path, message: outcome.message }], outcome.latestVersion !== undefined ? { latestVersion: outcome.latestVersion } : {});
}

export function storeRouter(options: StoreRouteOptions): express.Router {
  const { handle, validate, json, sameOrigin } = options;
  const router = express.Router();

  /** Runs `work` with the database, answering 503 when the store cannot be used or a statement fails. */
  const using = (mode: 'read' | 'write', work: (db: Db, req: Request, res: Response) => void | Promise<void>): RequestHandler => {
    return async (req, res) => {
      const access = mode === 'read' ? handle.read() : handle.write();
      if (!access.ok) {
        send(res, 503, [{ path: '', message: access.message }]);
        return;
      }
      try {
        await work(access.db, req, res);
      } catch (e) {
        send(res, 503, [{ path: '', message: handle.failed(e) }]);
      }
    };
  };

  /** The :id of a route that exists, or an answer already sent. */
  const scenarioId = (db: Db, req: Request, res: Response): number | null => {
    const id = positive(req.params.id);
    if (id === null || scenarioSummary(db, id) === null) {
      send(res, 404, [{ path: '', message: `there is no stored scenario ${JSON.stringify(String(req.params.id))}` }]);
      return null;
    }
    return id;
  };

  /** Validation first, with the problems' paths inside the request body. */
  const checked = async (scenario: unknown, res: Response): Promise<boolean> => {
    const refused = await validate(scenario);
    if (!refused) return true;
    send(res, refused.status, refused.problems.map((p) => ({ path: p.path ? `scenario.${p.path}` : 'scenario', message: p.message })));
    return false;
  };

  router.get('/store', (_req, res) => sendJson(res, 200, handle.status()));

  router.get(
    '/scenarios',
    using('read', (db, req, res) => {
      const q = req.query;
      const deleted = q.deleted === 'include' || q.deleted === 'only' ? q.deleted : 'exclude';
      const limit = q.limit === undefined ? 100 : positive(q.limit);
      const offset = q.offset === undefined || q.offset === '0' ? 0 : positive(q.offset);
      if (limit === null || offset === null) {
        send(res, 400, [{ path: limit === null ? 'limit' : 'offset', message: 'must be a whole number' }]);
        return;
      }
      sendJson(res, 200, listScenarios(db, { search: typeof q.search === 'string' ? q.search : '', deleted, limit, offset }));
    }),
  );

  router.post(
    '/scenarios',
    ...json,
    using('write', async (db, req, res) => {
      const body = newScenarioSchema.safeParse(req.body);
      if (!body.success) return send(res, 400, zodProblems(body.error));
      if (!(await checked(body.data.scenario, res))) return;
      const saved = createScenario(db, body.data);
      if (!saved.ok) return failure(res, saved);
      res.location(`/api/scenarios/${saved.value.id}`);
      sendJson(res, 201, saved.value);
    }),
  );

  router.get(
    '/scenarios/:id',
    using('read', (db, req, res) => {
      const id = scenarioId(db, req, res);
      if (id === null) return;
      const latest = readVersion(db, id);
      if (!latest) return send(res, 404, [{ path: '', message: `scenario ${id} has no versions` }]);
      const { scenario, json: _text, ...version } = latest;
      sendJson(res, 200, { ...scenarioSummary(db, id), version, scenario });
    }),
  );

  router.put(
    '/scenarios/:id',
    ...json,
    using('write', async (db, req, res) => {
      const id = scenarioId(db, req, res);
      if (id === null) return;
      const body = newVersionSchema.safeParse(req.body);
      if (!body.success) return send(res, 400, zodProblems(body.error));
      if (!(await checked(body.data.scenario, res))) return;
      const saved = saveVersion(db, id, body.data);
      if (!saved.ok) return failure(res, saved);
      sendJson(res, 200, saved.value);
    }),
  );

  router.patch(
    '/scenarios/:id',
    ...json,
    using('write', (db, req, res) => {
      const id = scenarioId(db, req, res);
      if (id === null) return;
      const body = metadataSchema.strict().safeParse(req.body);
      if (!body.success) return send(res, 400, zodProblems(body.error));
      const changed = updateMetadata(db, id, body.data);
      if (!changed.ok) return failure(res, changed);
      sendJson(res, 200, changed.value);
    }),
  );

  router.delete(
    '/scenarios/:id',
    sameOrigin,
    using('write', (db, req, res) => {
      const id = scenarioId(db, req, res);
      if (id === null) return;
      const done = setDeleted(db, id, true);
      if (!done.ok) return failure(res, done);
      sendJson(res, 200, done.value);
    }),
  );

  router.post(
    '/scenarios/:id/restore',
    sameOrigin,
    using('write', (db, req, res) => {
      const id = scenarioId(db, req, res);
      if (id === null) return;
      const done = setDeleted(db, id, false);
      if (!done.ok) return failure(res, done);
      sendJson(res, 200, done.value);
    }),
  );

  router.get(
    '/scenarios/:id/versions',
    using('read', (db, req, res) => {
      const id = scenarioId(db, req, res);
      if (id === null) return;
      sendJson(res, 200, { versions: listVersions(db, id) });
    }),
  );

  router.get(
    '/scenarios/:id/versions/:v',
    using('read', (db, req, res) => {
      const id = scenarioId(db, req, res);
      if (id === null) return;
      const v = positive(req.params.v);
      const found = v === null ? null : readVersion(db, id, v);
      if (!found) return send(res, 404, [{ path: '', message: `scenario ${id} has no version ${JSON.stringify(String(req.params.v))}` }]);
      const { json: _text, ...version } = found;
      sendJson(res, 200, version);
    }),
  );

  router.get(
    '/scenarios/:id/diff',
    using('read', (db, req, res) => {
      const id = scenarioId(db, req, res);
      if (id === null) return;
      const from = positive(req.query.from);
      const to = positive(req.query.to);
      const a = from === null ? null : readVersion(db, id, from);
      const b = to === null ? null : readVersion(db, id, to);
      if (!a || !b) {
        const which = !a ? 'from' : 'to';
        return send(res, 400, [{ path: which, message: `give ${which}= as a version of scenario ${id} (it has 1 to ${scenarioSummary(db, id)?.latestVersion ?? 0})` }]);
      }
      sendJson(res, 200, { from: a.version, to: b.version, changes: diffJson(a.scenario, b.scenario) });
    }),
  );

  router.get(
    '/scenarios/:id/runs',
    using('read', (db, req, res) => {
      const id = scenarioId(db, req, res);
      if (id === null) return;
      sendJson(res, 200, { runs: listRuns(db, id) });
    }),
  );

  router.get(
    '/runs/:id',
    using('read', (db, req, res) => {
      const id = positive(req.params.id);
      const run = id === null ? null : readRun(db, id);
      if (!run) return send(res, 404, [{ path: '', message: `there is no stored run ${JSON.stringify(String(req.params.id))}` }]);
      sendJson(res, 200, run);
    }),
  );

  router.get(
    '/scenarios/:id/reports',
    using('read', (db, req, res) => {
      const id = scenarioId(db, req, res);
      if (id === null) return;
      sendJson(res, 200, { reports: reportsOfScenario(db, id) });
    }),
  );

  router.get(
    '/reports',
    using('read', (db, req, res) => {
      const fingerprint = typeof req.query.fingerprint === 'string' ? req.query.fingerprint.trim().toLowerCase() : '';
      if (!/^[0-9a-f]{12}$/.test(fingerprint)) {
        return send(res, 400, [{ path: 'fingerprint', message: 'give fingerprint= as the 12 hexadecimal digits printed on the report' }]);
      }
      sendJson(res, 200, { reports: reportsWithFingerprint(db, fingerprint), versions: versionsWithFingerprint(db, fingerprint) });
    }),
  );

  router.get(
    '/reports/:id/pdf',
    using('read', (db, req, res) => {
      const id = positive(req.params.id);
      const pdf = id === null ? null : reportPdf(db, id);
      if (!pdf) return send(res, 404, [{ path: '', message: `there is no issued report ${JSON.stringify(String(req.params.id))}` }]);
      res.status(200).type('application/pdf').set('Cache-Control', 'no-store').set('Content-Disposition', `inline; filename="tidemark-report-${id}.pdf"`).send(Buffer.from(pdf));
    }),
  );

  return router;
}
