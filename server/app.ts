/**
 * The HTTP face of Tidemark: a JSON API over the engine and the built page. Every error
 * is JSON with a list of {path, message}; nothing answers with a stack trace.
 */
import express, { type ErrorRequestHandler, type NextFunction, type Request, type RequestHandler, type Response } from 'express';
import helmet from 'helmet';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { limits } from '../models/scenario/limits.ts';
import { scenarioJsonSchema } from '../models/scenario/json-schema.ts';
import type { Problem } from '../models/scenario/problems.ts';
import { readReportRequest, reportFileNameOf } from './report/request.ts';
import { defaultPopulationLimits, PopulationJobs, stateJson, type PopulationLimits } from './population-jobs.ts';
import type { Sample } from './samples.ts';
import type { SimulationPool, WorkerModule } from './worker-pool.ts';
import type { StoreHandle } from './store/handle.ts';
import { checkLink, linkOf, recordIssuedReport, recordSimulation } from './store/recording.ts';
import { storeRouter, type Validate } from './store/routes.ts';

export interface ServerLimits {
  /** Largest request body accepted, e.g. '2mb'. */
  bodyLimit: string;
  /** Reported times one API simulation may ask for. */
  maxOutputPoints: number;
  /** Wall-clock budget of one simulation, in milliseconds (enforced by the pool). */
  timeBudgetMs: number;
  /** Largest JSON answer of a simulation, in bytes; estimated from the schedule before the work, measured after. */
  maxResponseBytes: number;
}

export const defaultServerLimits: ServerLimits = {
  bodyLimit: '2mb',
  maxOutputPoints: 200_000,
  timeBudgetMs: 30_000,
  maxResponseBytes: 32 * 2 ** 20,
};

/**
 * Arrays and objects inside one another in a request body. A scenario needs about five;
 * far deeper ones only serve to overflow a stack (copying the body to a worker), so they
 * are refused right after parsing.
 */
export const maxNestingDepth = 64;

/** The names a loopback server answers for by default, with any port. */
export const loopbackHosts: readonly string[] = ['localhost', '127.0.0.1', '[::1]'];

export interface AppOptions {
  pool: SimulationPool;
  samples: Sample[];
  /** Folder of the built page; when absent the API still works and / says how to build it. */
  clientDir: string | null;
  limits: ServerLimits;
  /**
   * Host names (without port) this server answers for; another Host header is refused
   * with 421, so a page on a foreign name that resolves to this machine (DNS rebinding)
   * cannot read or drive it. Default: the loopback names. 'any' turns the check off.
   */
  allowedHosts?: readonly string[] | 'any';
  /**
   * Population runs (POST /api/population): their threads (default: as many as the pool has
   * workers), the worker module (default: the TypeScript source; the built server passes the
   * built one) and this server's limits (defaults: defaultPopulationLimits).
   */
  population?: { threads?: number; worker?: WorkerModule; limits?: Partial<PopulationLimits> };
  /**
   * The scenario store (server/store/): scenarios, versions, runs and issued reports. Without
   * one, GET /api/store says so and the store's routes answer 503.
   */
  store?: StoreHandle;
}

const populationJobsOfApp = new WeakMap<express.Express, PopulationJobs>();

/** The population jobs of an app made by createApp (to stop a running one at shutdown). */
export function populationJobsOf(app: express.Express): PopulationJobs | undefined {
  return populationJobsOfApp.get(app);
}

/** The host name of a Host header, lower case, without its port; IPv6 literals keep their brackets. */
export function hostNameOf(header: string): string {
  const h = header.trim().toLowerCase();
  if (h.startsWith('[')) {
    const close = h.indexOf(']');
    return close < 0 ? h : h.slice(0, close + 1);
  }
  const colon = h.indexOf(':');
  return colon < 0 ? h : h.slice(0, colon);
}

/**
 * True when a parsed JSON value nests arrays and objects more than `limit` deep. An
 * explicit stack, not recursion: the point is to survive bodies deep enough to overflow one.
 */
export function nestsDeeperThan(value: unknown, limit: number): boolean {
  const stack: { v: unknown; depth: number }[] = [{ v: value, depth: 0 }];
  while (stack.length > 0) {
    const { v, depth } = stack.pop() as { v: unknown; depth: number };
    if (typeof v !== 'object' || v === null) continue;
    if (depth + 1 > limit) return true;
    for (const child of Array.isArray(v) ? v : Object.values(v)) {
      if (typeof child === 'object' && child !== null) stack.push({ v: child, depth: depth + 1 });
    }
  }
  return false;
}

/**
 * The Host names a server listening on `listenHost` answers for: the loopback names and
 * `listenHost` itself, plus any listed in `extra` (comma-separated, the ALLOWED_HOSTS
 * setting). A wildcard address (0.0.0.0, ::) can be reached by names no one can list in
 * advance: it answers for any unless `extra` names them.
 */
export function allowedHostsFor(listenHost: string, extra?: string): readonly string[] | 'any' {
  const listed = (extra ?? '').split(',').map((h) => h.trim()).filter((h) => h.length > 0);
  const wildcard = ['', '0.0.0.0', '::', '[::]'].includes(listenHost.trim());
  if (wildcard && listed.length === 0) return 'any';
  const own = listenHost.includes(':') && !listenHost.startsWith('[') ? `[${listenHost}]` : listenHost;
  return [...new Set([...loopbackHosts, ...(wildcard ? [] : [own]), ...listed].map(hostNameOf))];
}

/** Mentions a header's text in a message, cut short and without control characters. */
function quoted(text: string): string {
  const plain = text.replace(/[\u0000-\u001f\u007f]/g, '?');
  return `'${plain.length > 80 ? `${plain.slice(0, 80)}…` : plain}'`;
}

/** A header value: printable ASCII only (a message may hold any character), cut short. */
function headerText(text: string): string {
  const plain = text.replace(/[^\x20-\x7e]/g, '?');
  return plain.length > 300 ? `${plain.slice(0, 300)}...` : plain;
}

/** A scenario to be saved is checked in the pool, as a run would read it. */
function validator(options: AppOptions): Validate {
  return async (scenario) => {
    const reply = await options.pool.run({ kind: 'validate', scenario, maxOutputPoints: limits.outputPoints });
    if (reply.status === 200) return null;
    const body = typeof reply.body === 'string' ? (JSON.parse(reply.body) as { problems?: Problem[] }) : {};
    return { status: reply.status === 422 ? 400 : reply.status, problems: body.problems ?? [{ path: '', message: 'the scenario could not be checked' }] };
  };
}

function sendProblems(res: Response, status: number, problems: Problem[]): void {
  res.status(status).type('application/json').send(JSON.stringify({ problems }));
}

export function createApp(options: AppOptions): express.Express {
  const app = express();
  app.disable('x-powered-by');
  app.use(
    helmet({
      contentSecurityPolicy: {
        useDefaults: false,
        directives: {
          defaultSrc: ["'self'"],
          scriptSrc: ["'self'"],
          styleSrc: ["'self'"],
          imgSrc: ["'self'", 'data:', 'blob:'],
          fontSrc: ["'self'"],
          connectSrc: ["'self'"],
          objectSrc: ["'none'"],
          baseUri: ["'none'"],
          formAction: ["'self'"],
          frameAncestors: ["'none'"],
        },
      },
      crossOriginEmbedderPolicy: false,
    }),
  );

  const allowedHosts = options.allowedHosts ?? loopbackHosts;
  if (allowedHosts !== 'any') {
    const allowed = new Set(allowedHosts.map(hostNameOf));
    const shown = [...allowed].join(', ');
    app.use((req: Request, res: Response, next: NextFunction) => {
      const host = req.headers.host ?? '';
      if (allowed.has(hostNameOf(host))) {
        next();
        return;
      }
      sendProblems(res, 421, [{ path: '', message: `this server answers only when addressed as ${shown} (any port); this request was addressed to ${quoted(host)}` }]);
    });
  }

  // A POST body is JSON from this server's own page or a program, never a cross-site form
  // or fetch: any page the user visits could otherwise make the browser send one.
  const sameOrigin: RequestHandler = (req, res, next) => {
    const site = req.headers['sec-fetch-site'];
    if (site !== undefined && site !== 'same-origin' && site !== 'none') {
      sendProblems(res, 403, [{ path: '', message: `requests from other sites are refused (Sec-Fetch-Site: ${quoted(String(site))}); post from this server's own page or from a program` }]);
      return;
    }
    const origin = req.headers.origin;
    if (origin !== undefined) {
      const own = `${req.protocol}://${req.headers.host ?? ''}`.toLowerCase();
      if (origin.toLowerCase() !== own) {
        sendProblems(res, 403, [{ path: '', message: `requests from another origin are refused (Origin ${quoted(origin)}, this server is ${quoted(own)})` }]);
        return;
      }
    }
    next();
  };
  const jsonOnly: RequestHandler = (req, res, next) => {
    const type = (req.headers['content-type'] ?? '').split(';')[0].trim().toLowerCase();
    if (type !== 'application/json') {
      sendProblems(res, 415, [{ path: '', message: `the request body must be sent as application/json (it was ${type ? quoted(type) : 'without a Content-Type'})` }]);
      return;
    }
    next();
  };
  const parse = express.json({ limit: options.limits.bodyLimit, strict: false, type: 'application/json' });
  const shallow: RequestHandler = (req, res, next) => {
    if (nestsDeeperThan(req.body, maxNestingDepth)) {
      sendProblems(res, 400, [{ path: '', message: `the request body nests arrays and objects too deep; this server accepts at most ${maxNestingDepth} levels` }]);
      return;
    }
    next();
  };
  const json = [sameOrigin, jsonOnly, parse, shallow];
  const answerLimits = { maxOutputPoints: options.limits.maxOutputPoints, maxResponseBytes: options.limits.maxResponseBytes };
  const api = express.Router();
  const populationLimits: PopulationLimits = { ...defaultPopulationLimits, ...options.population?.limits };
  const population = new PopulationJobs({
    threads: options.population?.threads ?? options.pool.options.size,
    ...(options.population?.worker ? { worker: options.population.worker } : {}),
    limits: populationLimits,
    heapMb: options.pool.memoryLimits.workerHeapMb,
  });
  populationJobsOfApp.set(app, population);

  // ?scenario=ID&version=V records the run against that stored version (when the body is it).
  api.post('/simulate', json, async (req: Request, res: Response) => {
    const link = linkOf(req.query);
    const startedAt = new Date();
    const reply = await options.pool.run({ kind: 'simulate', scenario: req.body, ...answerLimits });
    if (link !== null && reply.status === 200 && typeof reply.body === 'string') {
      const recorded = 'problem' in link ? `not recorded; ${link.problem}` : options.store ? recordSimulation(options.store, link, req.body, reply.body, startedAt, Date.now() - startedAt.getTime()) : 'not recorded; this server has no store';
      res.set('X-Tidemark-Run', headerText(recorded));
    }
    res.status(reply.status).type(reply.contentType).send(reply.body);
  });

  // The printable report: a plain scenario, or { scenario, reference }. PDF on success; the
  // same JSON problems as /simulate otherwise (400 invalid, 422 numerical failure).
  api.post('/report', json, async (req: Request, res: Response) => {
    const request = readReportRequest(req.body);
    // ?scenario=ID&version=V&by=NAME records the issued report; it must be that version.
    const link = linkOf(req.query);
    if (link !== null && 'problem' in link) return sendProblems(res, 400, [{ path: 'scenario', message: link.problem }]);
    if (link !== null && !options.store) return sendProblems(res, 503, [{ path: '', message: 'this server has no store, so the report cannot be recorded' }]);
    const check = link !== null && options.store ? checkLink(options.store, link, request.scenario) : null;
    if (check && !check.ok) return sendProblems(res, check.status, [{ path: check.status === 409 ? 'scenario' : '', message: check.message }]);
    const stored = link !== null && check?.ok ? { name: check.name, id: link.id, version: link.version, by: link.by } : undefined;
    const reply = await options.pool.run({ kind: 'report', scenario: request.scenario, reference: request.reference, maxOutputPoints: options.limits.maxOutputPoints, ...(stored ? { stored } : {}) });
    if (reply.status === 200 && typeof reply.body !== 'string') {
      if (link !== null && check?.ok && options.store) {
        const issued = recordIssuedReport(options.store, link, check.fingerprint, reply.body);
        // The PDF is not sent unrecorded: the page promises every issued report a stored version.
        if (!issued.ok) return sendProblems(res, 503, [{ path: '', message: `the report was made but could not be recorded: ${issued.message}` }]);
        res.set('X-Tidemark-Report', String(issued.id));
      }
      res
        .status(200)
        .type('application/pdf')
        .set('Content-Disposition', `attachment; filename="${reportFileNameOf(request.scenario)}"`)
        .set('Cache-Control', 'no-store')
        .send(Buffer.from(reply.body.buffer, reply.body.byteOffset, reply.body.byteLength));
      return;
    }
    res.status(reply.status).type(reply.contentType).send(reply.body);
  });

  // Validation can be as heavy as expanding a long schedule, so it runs in the pool too.
  api.post('/validate', json, async (req: Request, res: Response) => {
    const reply = await options.pool.run({ kind: 'validate', scenario: req.body, ...answerLimits });
    res.status(reply.status).type(reply.contentType).send(reply.body);
  });

  // Measured levels: NCA, a fit, regimen proposals. Pool jobs like /simulate (same time budget);
  // 400 with paths for wrong input, 422 when the computation fails.
  const levelsJob = (kind: 'nca' | 'fit' | 'propose'): RequestHandler => async (req, res) => {
    const objective = req.query.objective;
    const rule = req.query.rule;
    if (kind === 'fit' && objective !== undefined && objective !== 'wls' && objective !== 'map') {
      return sendProblems(res, 400, [{ path: 'objective', message: `?objective must be wls or map, not ${quoted(String(objective))}` }]);
    }
    if (kind === 'nca' && rule !== undefined && rule !== 'log-down' && rule !== 'linear') {
      return sendProblems(res, 400, [{ path: 'rule', message: `?rule must be log-down (linear up, log-linear down) or linear, not ${quoted(String(rule))}` }]);
    }
    const reply = await options.pool.run({
      kind,
      scenario: req.body,
      ...answerLimits,
      ...(kind === 'fit' && (objective === 'wls' || objective === 'map') ? { objective } : {}),
      ...(kind === 'nca' && rule !== undefined ? { rule: rule === 'linear' ? ('linear' as const) : ('linear-up-log-down' as const) } : {}),
    });
    res.status(reply.status).type(reply.contentType).send(reply.body);
  };
  api.post('/nca', json, levelsJob('nca'));
  api.post('/fit', json, levelsJob('fit'));
  api.post('/propose', json, levelsJob('propose'));

  // A virtual population: { scenario, subjects?, seed? } → 202 { id }, then polled by id.
  api.post('/population', json, async (req: Request, res: Response) => {
    const answer = await population.start(req.body);
    if (answer.status === 202) {
      res.status(202).location(`/api/population/${answer.id}`).json({ id: answer.id });
      return;
    }
    sendProblems(res, answer.status, answer.problems);
  });

  api.get('/population/:id', (req, res) => {
    const state = population.state(String(req.params.id));
    if (!state) {
      sendProblems(res, 404, [{ path: '', message: `no population run '${String(req.params.id)}' is kept here (finished runs are kept ${Math.round(populationLimits.keepMs / 60_000)} minutes)` }]);
      return;
    }
    res.status(200).type('application/json').set('Cache-Control', 'no-store').send(stateJson(state));
  });

  api.delete('/population/:id', sameOrigin, (req, res) => {
    const state = population.cancel(String(req.params.id));
    if (!state) {
      sendProblems(res, 404, [{ path: '', message: `no population run '${String(req.params.id)}' is kept here` }]);
      return;
    }
    res.status(200).json({ state: state.state });
  });

  api.get('/schema', (_req, res) => {
    res.json(scenarioJsonSchema());
  });

  api.get('/limits', (_req, res) => {
    res.json({
      ...limits,
      outputPoints: Math.min(limits.outputPoints, options.limits.maxOutputPoints),
      bodyLimit: options.limits.bodyLimit,
      nestingDepth: maxNestingDepth,
      responseBytes: options.limits.maxResponseBytes,
      timeBudgetMs: options.limits.timeBudgetMs,
      ...options.pool.memoryLimits,
      population: populationLimits,
    });
  });

  api.get('/samples', (_req, res) => {
    res.json(options.samples.map(({ id, title, description }) => ({ id, title, description })));
  });

  api.get('/samples/:id', (req, res) => {
    const sample = options.samples.find((s) => s.id === req.params.id);
    if (!sample) {
      sendProblems(res, 404, [{ path: '', message: `no sample named '${req.params.id}'` }]);
      return;
    }
    res.json(sample.scenario);
  });

  if (options.store) {
    api.use(storeRouter({ handle: options.store, validate: validator(options), json, sameOrigin }));
  } else {
    api.get('/store', (_req, res) => {
      res.json({ available: false, file: '', schemaVersion: 0, readOnly: false, message: 'this server was started without a store' });
    });
    api.use(['/scenarios', '/runs', '/reports'], (_req, res) => {
      sendProblems(res, 503, [{ path: '', message: 'this server was started without a store' }]);
    });
  }

  api.use((req, res) => {
    sendProblems(res, 404, [{ path: '', message: `no API route ${req.method} ${req.originalUrl}` }]);
  });

  app.use('/api', api);

  if (options.clientDir && existsSync(join(options.clientDir, 'index.html'))) {
    const dir = options.clientDir;
    app.use(express.static(dir, { index: 'index.html', maxAge: '1h' }));
    app.get('/', (_req, res) => res.sendFile(join(dir, 'index.html')));
  } else {
    app.get('/', (_req, res) => {
      res.type('text/plain').send('The page is not built. Run `npm run build`, then restart the server.');
    });
  }

  app.use((req, res) => {
    sendProblems(res, 404, [{ path: '', message: `nothing at ${req.method} ${req.originalUrl}` }]);
  });

  const onError: ErrorRequestHandler = (err: { type?: string; status?: number; message?: string }, _req, res, _next) => {
    if (err.type === 'entity.too.large') {
      sendProblems(res, 413, [{ path: '', message: `the request body is larger than this server accepts (${options.limits.bodyLimit})` }]);
    } else if (err.type === 'entity.parse.failed') {
      sendProblems(res, 400, [{ path: '', message: `the request body is not valid JSON: ${err.message ?? ''}`.trim() }]);
    } else if (err.status && err.status >= 400 && err.status < 500) {
      sendProblems(res, err.status, [{ path: '', message: err.message ?? 'bad request' }]);
    } else {
      sendProblems(res, 500, [{ path: '', message: 'internal error; the request was not completed' }]);
    }
  };
  app.use(onError);
  return app;
}
