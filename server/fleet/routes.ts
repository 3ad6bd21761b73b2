// Fleet views: the fleet table's CSV export, the version matrix, lagging sites, retries,
// notes, the logger timeline, sparklines and "Why no update?". GET /api/loggers itself stays with the
// registry routes (server/loggers/routes.ts) and answers through server/fleet/table.ts.
//
// Registered before the registry routes, so /api/loggers/export.csv is not read as a logger id.
import type { Summaries } from './summaries';
import type { Response } from 'express';
import type { Sequelize } from 'sequelize';
import type { Api } from '../http/api';
import { declareAccess, rules } from '../auth/access';
import { parse } from '../http/validate';
import { contextOf } from '../http/context';
import { idParams } from '../../schemas/common';
import { loggersQuery } from '../../schemas/loggers';
import { laggingQuery, noteRequest, retryRequest, siteNotesQuery, sparklineQuery, timelineQuery } from '../../schemas/fleet';
import { exportFleet } from './table';
import { exportLagging, laggingSites } from './lagging';
import { versionMatrix } from './versions';
import { addLoggerNote, addSiteNote, retryFailed, siteNotes, sparklines, timeline, whyNoUpdate } from './service';

const readers = rules.everyone;
const noteWriters = ['support', 'release_engineer', 'admin'] as const;

declareAccess({
  'GET /api/loggers/export.csv': rules.people(readers, ['fleet:read']),
  'GET /api/fleet/versions': rules.people(readers, ['fleet:read']),
  'GET /api/fleet/lagging-sites': rules.people(readers, ['fleet:read']),
  'GET /api/fleet/lagging-sites/export.csv': rules.people(readers, ['fleet:read']),
  'POST /api/releases/:id/retry': rules.people(['admin', 'release_engineer']),
  'POST /api/loggers/:id/notes': rules.people(noteWriters),
  'POST /api/sites/:id/notes': rules.people(noteWriters),
  'GET /api/sites/:id/notes': rules.people(readers, ['fleet:read']),
  'GET /api/loggers/:id/timeline': rules.people(readers, ['fleet:read']),
  'GET /api/loggers/:id/sparklines': rules.people(readers, ['fleet:read']),
  'GET /api/loggers/:id/why': rules.people(readers, ['fleet:read']),
});

export type FleetRouteDeps = { sequelize: Sequelize; now: () => Date; summaries: Summaries };

/**
 * Streams CSV: headers first, then chunks as they are read, waiting whenever the client is slow. One
 * 'drain' and one 'close' listener serve the whole export: the compression middleware moves 'drain'
 * listeners onto its zlib stream, where `res.off` cannot reach them, so a listener per wait would pile up
 * (one more for every wait of a long export, each called at every later drain).
 */
export function csvStream(res: Response, fileName: string) {
  res.setHeader('Content-Type', 'text/csv; charset=utf-8');
  res.setHeader('Content-Disposition', `attachment; filename="${fileName}"`);
  res.setHeader('Cache-Control', 'no-store');
  let waiting: { resolve: () => void; reject: (err: Error) => void } | null = null;
  const settle = (how: (w: NonNullable<typeof waiting>) => void) => () => {
    const w = waiting;
    waiting = null;
    if (w) how(w);
  };
  res.on('drain', settle((w) => w.resolve()));
  res.on('close', settle((w) => w.reject(new Error('client went away'))));
  return (chunk: string) =>
    new Promise<void>((resolve, reject) => {
      if (res.destroyed) return reject(new Error('client went away'));
      if (res.write(chunk)) return resolve();
      waiting = { resolve, reject };
    });
}

/** Ends the stream; a failure after the first bytes cannot become a problem response, so the connection is cut (the file is visibly incomplete). */
async function finishStream(res: Response, run: () => Promise<unknown>) {
  try {
    await run();
    res.end();
  } catch (err) {
    if (!res.headersSent) throw err;
    res.destroy(err instanceof Error ? err : new Error(String(err)));
  }
}

const stamp = (d: Date) => d.toISOString().slice(0, 16).replace(/[-:]/g, '').replace('T', '-');

export function registerFleetRoutes(api: Api, deps: FleetRouteDeps) {
  api.get('/api/loggers/export.csv', async (req, res) => {
    const query = parse(loggersQuery, req.query, 'query');
    const write = csvStream(res, `heliodor-loggers-${stamp(deps.now())}.csv`);
    await finishStream(res, () => exportFleet(deps, contextOf(req).actor, query, write));
  });

  api.get('/api/fleet/versions', async (req, res) => {
    res.json(await versionMatrix(deps, contextOf(req).actor));
  });

  api.get('/api/fleet/lagging-sites', async (req, res) => {
    const query = parse(laggingQuery, req.query, 'query');
    res.json(await laggingSites(deps, contextOf(req).actor, query));
  });

  api.get('/api/fleet/lagging-sites/export.csv', async (req, res) => {
    const query = parse(laggingQuery, req.query, 'query');
    const write = csvStream(res, `heliodor-lagging-sites-${stamp(deps.now())}.csv`);
    await finishStream(res, () => exportLagging(deps, contextOf(req).actor, query, write));
  });

  api.post('/api/releases/:id/retry', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const body = parse(retryRequest, req.body);
    res.json(await retryFailed(deps, contextOf(req), id, body));
  });

  api.post('/api/loggers/:id/notes', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const { text } = parse(noteRequest, req.body);
    res.status(201).json(await addLoggerNote(deps, contextOf(req), id, text));
  });

  api.post('/api/sites/:id/notes', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const { text } = parse(noteRequest, req.body);
    res.status(201).json(await addSiteNote(deps, contextOf(req), id, text));
  });

  api.get('/api/sites/:id/notes', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const query = parse(siteNotesQuery, req.query, 'query');
    res.json(await siteNotes(deps, contextOf(req).actor, id, query));
  });

  api.get('/api/loggers/:id/timeline', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const query = parse(timelineQuery, req.query, 'query');
    res.json(await timeline(deps, contextOf(req).actor, id, query));
  });

  api.get('/api/loggers/:id/sparklines', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const { days } = parse(sparklineQuery, req.query, 'query');
    res.json(await sparklines(deps, contextOf(req).actor, id, days));
  });

  api.get('/api/loggers/:id/why', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await whyNoUpdate(deps, contextOf(req).actor, id));
  });
}
