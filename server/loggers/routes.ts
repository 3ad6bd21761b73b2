// Loggers: the registry (list, detail, register one or a batch, rotate, retire), enrollment on site
// (lookup, enroll, move, profile changes) and the install photo.
import type { Request } from 'express';
import multer from 'multer';
import type { Sequelize } from 'sequelize';
import type { Api } from '../http/api';
import type { Config } from '../config';
import { parse } from '../http/validate';
import { contextOf } from '../http/context';
import { problems } from '../http/problem';
import { idParams } from '../../schemas/common';
import {
  enrollmentLookupRequest,
  enrollRequest,
  loggersQuery,
  moveLoggerRequest,
  profileChangeRequest,
  registerLoggerRequest,
  retireLoggerRequest,
} from '../../schemas/loggers';
import { getLoggerDetail, issueBatchLabels, listLoggers, registerBatch, registerLogger, retireLogger, rotateToken } from './service';
import { changeProfile, enroll, lookupLabel, moveLogger } from './enrollment';
import { PHOTO_LIMIT_BYTES, readPhoto, savePhoto } from './photos';
import { getCommissioning, restartCommissioning } from './commissioning';

export type LoggerRouteDeps = { sequelize: Sequelize; now: () => Date; config: Pick<Config, 'publicUrl'> };

/** A batch of 5 000 rows is well under 1 MB; 8 MB leaves room for long model names without inviting abuse. */
const BATCH_FILE_LIMIT = 8 * 1024 * 1024;
const batchUpload = multer({ storage: multer.memoryStorage(), limits: { fileSize: BATCH_FILE_LIMIT, files: 1, fields: 10 } });
// Memory storage: a photo is checked whole (type by its first bytes, size) before anything is written.
const photoUpload = multer({ storage: multer.memoryStorage(), limits: { fileSize: PHOTO_LIMIT_BYTES, files: 1, fields: 10 } });

/** The console origin a label's link points to: the configured public URL, else the request's own origin. */
export function consoleOrigin(req: Request, publicUrl: string | undefined): string {
  return publicUrl ?? `${req.protocol}://${req.get('host') ?? 'localhost'}`;
}

export function registerLoggerRoutes(api: Api, deps: LoggerRouteDeps) {
  api.get('/api/loggers', async (req, res) => {
    const query = parse(loggersQuery, req.query, 'query');
    res.json(await listLoggers(deps, contextOf(req).actor, query));
  });

  api.get('/api/loggers/:id', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await getLoggerDetail(deps, contextOf(req).actor, id));
  });

  api.post('/api/loggers', async (req, res) => {
    const body = parse(registerLoggerRequest, req.body);
    res.status(201).json(await registerLogger(deps, contextOf(req), body, consoleOrigin(req, deps.config.publicUrl)));
  });

  api.post('/api/loggers/batch', batchUpload.single('file'), async (req, res) => {
    if (!req.file) {
      throw problems.badRequest('Attach the CSV file as the multipart field "file".', [{ path: 'file', message: 'is required' }]);
    }
    res.status(201).json(await registerBatch(deps, contextOf(req), req.file.buffer, req.file.originalname ?? ''));
  });

  // New labels for every logger of a batch still waiting for enrollment (the first answer was lost).
  api.post('/api/batches/:id/labels', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await issueBatchLabels(deps, contextOf(req), id));
  });

  api.post('/api/loggers/:id/token', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await rotateToken(deps, contextOf(req), id, consoleOrigin(req, deps.config.publicUrl)));
  });

  api.post('/api/loggers/:id/retire', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const { reason } = parse(retireLoggerRequest, req.body);
    res.json(await retireLogger(deps, contextOf(req), id, reason || undefined));
  });

  api.post('/api/enrollments/lookup', async (req, res) => {
    const { token } = parse(enrollmentLookupRequest, req.body);
    res.json(await lookupLabel(token));
  });

  api.post('/api/enrollments', async (req, res) => {
    const body = parse(enrollRequest, req.body);
    res.status(201).json(await enroll(deps, contextOf(req), body));
  });

  api.post('/api/loggers/:id/move', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const { siteId } = parse(moveLoggerRequest, req.body);
    res.json(await moveLogger(deps, contextOf(req), id, siteId));
  });

  api.patch('/api/loggers/:id/profile', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const body = parse(profileChangeRequest, req.body);
    res.json(await changeProfile(deps, contextOf(req), id, body));
  });

  api.post('/api/loggers/:id/photo', photoUpload.single('photo'), async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    if (!req.file) throw problems.badRequest('Attach the photo as the multipart field "photo".', [{ path: 'photo', message: 'is required' }]);
    await savePhoto(deps, contextOf(req), id, req.file.buffer);
    res.status(204).end();
  });

  api.get('/api/loggers/:id/photo', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    const photo = await readPhoto(deps, contextOf(req).actor, id);
    res.setHeader('Content-Type', photo.contentType);
    res.setHeader('Cache-Control', 'private, no-cache');
    res.setHeader('ETag', `"${photo.sha256}"`);
    res.send(photo.bytes);
  });

  // The first-readings check kept with the logger, and starting it again once the wiring is fixed.
  api.get('/api/loggers/:id/commissioning', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await getCommissioning(deps, contextOf(req).actor, id));
  });

  api.post('/api/loggers/:id/commissioning/restart', async (req, res) => {
    const { id } = parse(idParams, req.params, 'path');
    res.json(await restartCommissioning(deps, contextOf(req), id));
  });
}
