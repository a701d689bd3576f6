/**
 * The HTTP face of Tidemark: a JSON API over the engine and the built page. Every error
 * is JSON with a list of {path, message}; nothing answers with a stack trace.
 */
import express, { type ErrorRequestHandler, type Request, type Response } from 'express';
import helmet from 'helmet';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { limits } from '../models/limits.ts';
import { scenarioJsonSchema } from '../models/json-schema.ts';
import type { Problem } from '../models/problems.ts';
import { readReportRequest, reportFileNameOf } from './report/request.ts';
import type { Sample } from './samples.ts';
import type { SimulationPool } from './worker-pool.ts';

export interface ServerLimits {
  /** Largest request body accepted, e.g. '2mb'. */
  bodyLimit: string;
  /** Reported times one API simulation may ask for. */
  maxOutputPoints: number;
  /** Wall-clock budget of one simulation, in milliseconds (enforced by the pool). */
  timeBudgetMs: number;
}

export const defaultServerLimits: ServerLimits = {
  bodyLimit: '2mb',
  maxOutputPoints: 200_000,
  timeBudgetMs: 30_000,
};

export interface AppOptions {
  pool: SimulationPool;
  samples: Sample[];
  /** Folder of the built page; when absent the API still works and / says how to build it. */
  clientDir: string | null;
  limits: ServerLimits;
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

  const json = express.json({ limit: options.limits.bodyLimit, strict: false, type: ['application/json', 'text/plain'] });
  const api = express.Router();

  api.post('/simulate', json, async (req: Request, res: Response) => {
    const reply = await options.pool.run({ kind: 'simulate', scenario: req.body, maxOutputPoints: options.limits.maxOutputPoints });
    res.status(reply.status).type(reply.contentType).send(reply.body);
  });

  // The printable report: a plain scenario, or { scenario, reference }. PDF on success; the
  // same JSON problems as /simulate otherwise (400 invalid, 422 numerical failure).
  api.post('/report', json, async (req: Request, res: Response) => {
    const request = readReportRequest(req.body);
    const reply = await options.pool.run({ kind: 'report', scenario: request.scenario, reference: request.reference, maxOutputPoints: options.limits.maxOutputPoints });
    if (reply.status === 200 && typeof reply.body !== 'string') {
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
    const reply = await options.pool.run({ kind: 'validate', scenario: req.body, maxOutputPoints: options.limits.maxOutputPoints });
    res.status(reply.status).type(reply.contentType).send(reply.body);
  });

  api.get('/schema', (_req, res) => {
    res.json(scenarioJsonSchema());
  });

  api.get('/limits', (_req, res) => {
    res.json({ ...limits, outputPoints: Math.min(limits.outputPoints, options.limits.maxOutputPoints), bodyLimit: options.limits.bodyLimit, timeBudgetMs: options.limits.timeBudgetMs });
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
