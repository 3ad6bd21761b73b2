// Enrollment on site: the label's token names the logger, the integrator binds it to a site with the
// install details, and the server computes the measurement profile from the power-monitor equations.
// Later: moving to another site and profile changes (each a new profile version, delivered at check-in).
import crypto from 'node:crypto';
import { QueryTypes, type Transaction } from 'sequelize';
import { Logger, LoggerModel, MeasurementProfile, Site } from '../db/models';
import { recordActivity } from '../activity/service';
import { problems } from '../http/problem';
import type { RequestContext } from '../auth/actor';
import { digestToken } from '../auth/tokens';
import { authorize } from '../auth/policies';
import { siteResource } from '../sites/service';
import { canonicalJson } from '../images/manifest';
import { ABOVE_RATING, coldVoc, measurementProfile, type ComputedProfile, type InstallForProfile } from '../../lib/calibration';
import { latestProfile, presentDetail, presentProfile, type StoredInstall } from './present';
import { loggerFor, type RegistryDeps } from './service';
import { startCommissioning } from './commissioning';
import type { Enrolled, EnrollmentLookup, EnrollRequest, LoggerDetail, ProfileChangeRequest, ProfileView } from '../../schemas/loggers';

export const unknownLabel =
  'This label is not known: its token may have been rotated or the logger retired. Ask an admin for a new label.';

const personId = (ctx: RequestContext) => (ctx.actor.type === 'person' ? ctx.actor.id : null);

async function loggerByToken(token: string, transaction?: Transaction): Promise<Logger> {
  const logger = await Logger.findOne({
    where: { tokenDigest: digestToken(token) },
    ...(transaction ? { transaction, lock: transaction.LOCK.UPDATE } : {}),
  });
  if (!logger) throw problems.notFound('label', unknownLabel);
  if (logger.status === 'retired') {
    throw problems.conflict(`Logger ${logger.serial} was retired${logger.retiredAt ? ` on ${logger.retiredAt.toISOString().slice(0, 10)}` : ''}; it cannot be enrolled.`);
  }
  return logger;
}

const limitsOf = (model: LoggerModel) => ({
  busVMax: Number(model.busVMax),
  shuntFullScaleV: Number(model.shuntFullScaleV),
  tempResolutions: [...model.tempResolutions].sort((a, b) => a - b),
});

export async function lookupLabel(token: string): Promise<EnrollmentLookup> {
  const logger = await loggerByToken(token);
  const [model, site] = await Promise.all([LoggerModel.findByPk(logger.modelId), logger.siteId ? Site.findByPk(logger.siteId) : null]);
  return {
    logger: {
      id: logger.id,
      serial: logger.serial,
      modelId: logger.modelId,
      modelName: model!.name,
      board: logger.board,
      status: logger.status,
      site: site ? { id: site.id, name: site.name, minTempC: site.minTempC === null ? null : Number(site.minTempC) } : null,
    },
    limits: limitsOf(model!),
  };
}

/** The profile for the install, or 400 whose field errors name the limit that refuses it. */
function computeProfile(install: InstallForProfile, model: LoggerModel, site: Site | null): ComputedProfile {
  const siteMinTempC = site && site.minTempC !== null && site.minTempC !== undefined ? Number(site.minTempC) : null;
  const result = measurementProfile({ ...install, siteMinTempC }, limitsOf(model));
  if (!result.ok) {
    throw problems.badRequest(`The measurement profile cannot be set up: ${result.errors.map((e) => e.message).join('; ')}.`, result.errors);
  }
  return result.profile;
}

async function storeProfile(
  ctx: RequestContext,
  logger: Logger,
  profile: ComputedProfile,
  panel: { panelWp: number | null; panelVocV: number | null },
  transaction: Transaction,
): Promise<MeasurementProfile> {
  const previous = await latestProfile(logger.id, transaction);
  return MeasurementProfile.create(
    { loggerId: logger.id, version: (previous?.version ?? 0) + 1, ...profile, ...panel, createdBy: personId(ctx) },
    { transaction },
  );
}

async function siteFor(siteId: string, transaction: Transaction): Promise<Site> {
  const site = await Site.findByPk(siteId, { transaction });
  if (!site) throw problems.badRequest('Check the body: siteId.', [{ path: 'siteId', message: 'no such site' }]);
  return site;
}

/** What an enrollment asked for, as a digest (SHA-256 of its RFC 8785 canonical JSON, docs/SOURCES.md §17): the label's token is never stored. */
function requestDigest(body: EnrollRequest): string {
  const { enrollmentId: _id, ...asked } = body;
  return crypto.createHash('sha256').update(canonicalJson({ ...asked, notes: asked.notes ?? '' }), 'utf8').digest('hex');
}

/**
 * Claims the phone's enrollment id for this person inside the enrollment's transaction. A concurrent
 * claim of the same id waits for this transaction (the primary key), then finds the row committed.
 * Answers the first enrollment's answer when the id was already used for the same request.
 */
async function claimEnrollment(
  sequelize: RegistryDeps['sequelize'],
  personId: string,
  body: EnrollRequest & { enrollmentId: string },
  transaction: Transaction,
): Promise<Enrolled | null> {
  const digest = requestDigest(body);
  const claimed = await sequelize.query<{ enrollment_id: string }>(
    `INSERT INTO enrollment_requests (person_id, enrollment_id, request_digest) VALUES (:personId, :enrollmentId, :digest)
     ON CONFLICT (person_id, enrollment_id) DO NOTHING RETURNING enrollment_id`,
    { replacements: { personId, enrollmentId: body.enrollmentId, digest }, type: QueryTypes.SELECT, transaction },
  );
  if (claimed.length) return null;
  const [first] = await sequelize.query<{ request_digest: string; answer: Enrolled }>(
    'SELECT request_digest, answer FROM enrollment_requests WHERE person_id = :personId AND enrollment_id = :enrollmentId',
    { replacements: { personId, enrollmentId: body.enrollmentId }, type: QueryTypes.SELECT, transaction },
  );
  if (first.request_digest !== digest) {
    throw problems.unprocessable(
      'This enrollment id was already used for a different enrollment (another label, site or install details); a new enrollment needs a new id.',
      [{ path: 'enrollmentId', message: 'was already used for a different enrollment' }],
    );
  }
  return first.answer;
}

export async function enroll(deps: RegistryDeps, ctx: RequestContext, body: EnrollRequest): Promise<Enrolled> {
  return deps.sequelize.transaction(async (transaction) => {
    const person = personId(ctx);
    const enrollmentId = body.enrollmentId;
    if (person && enrollmentId) {
      const first = await claimEnrollment(deps.sequelize, person, { ...body, enrollmentId }, transaction);
      if (first) return first;
    }
    const logger = await loggerByToken(body.token, transaction);
    if (logger.status === 'enrolled') {
      const at = logger.siteId ? await Site.findByPk(logger.siteId, { transaction }) : null;
      throw problems.conflict(`Logger ${logger.serial} is already enrolled at ${at?.name ?? 'a site'}; use Move to take it to another site.`, {
        loggerId: logger.id,
      });
    }
    const site = await siteFor(body.siteId, transaction);
    authorize(ctx.actor, 'enroll', await siteResource(site.id, transaction));
    const model = (await LoggerModel.findByPk(logger.modelId, { transaction }))!;
    const computed = computeProfile(body, model, site);

    const now = deps.now();
    const previous = (logger.install as StoredInstall | null) ?? {};
    const install: StoredInstall = {
      ...previous,
      panelWp: body.panelWp,
      panelVocV: body.panelVocV,
      vocTempCoeffPctPerC: body.vocTempCoeffPctPerC ?? null,
      notes: body.notes ?? '',
    };
    await logger.update({ status: 'enrolled', siteId: site.id, enrolledAt: now, enrolledBy: personId(ctx), install }, { transaction });
    const profile = await storeProfile(ctx, logger, computed, { panelWp: body.panelWp, panelVocV: body.panelVocV }, transaction);
    // Its first readings under this profile will be compared with the wiring (lib/commissioning.ts).
    await startCommissioning(deps.sequelize, transaction, logger.id, profile.version, now);
    await recordActivity(transaction, ctx, {
      action: 'logger.enrolled',
      targetType: 'logger',
      targetId: logger.id,
      summary: `Logger ${logger.serial} enrolled at ${site.name} (profile v${profile.version}: calibration ${profile.calibration}, ${body.panelWp} Wp panel)`,
      details: { siteId: site.id, profileVersion: profile.version },
    });
    const answer: Enrolled = { logger: await presentDetail(ctx.actor, logger, now, transaction), profile: presentProfile(profile) };
    if (person && enrollmentId) {
      await deps.sequelize.query(
        `UPDATE enrollment_requests SET logger_id = :loggerId, status = 201, answer = CAST(:answer AS jsonb)
         WHERE person_id = :person AND enrollment_id = :enrollmentId`,
        { replacements: { loggerId: logger.id, answer: JSON.stringify(answer), person, enrollmentId }, transaction },
      );
    }
    return answer;
  });
}

export async function moveLogger(deps: RegistryDeps, ctx: RequestContext, id: string, siteId: string): Promise<LoggerDetail> {
  return deps.sequelize.transaction(async (transaction) => {
    // An integrator moves a logger only from a site assigned to them (loggerFor) to another one (below).
    const logger = await loggerFor(ctx.actor, id, transaction, 'move');
    if (logger.status === 'registered') throw problems.conflict(`Logger ${logger.serial} is not enrolled yet; enroll it by scanning its label.`);
    if (logger.status === 'retired') throw problems.conflict(`Logger ${logger.serial} is retired; it cannot be moved.`);
    const site = await siteFor(siteId, transaction);
    if (logger.siteId === site.id) throw problems.conflict(`Logger ${logger.serial} is already at ${site.name}.`);
    authorize(ctx.actor, 'enroll', await siteResource(site.id, transaction));
    // The new site may be colder: its lowest temperature raises the panel's open-circuit voltage (NEC 2023 690.7(A)).
    const stored = (logger.install as StoredInstall | null) ?? {};
    if (stored.panelVocV != null) {
      const model = (await LoggerModel.findByPk(logger.modelId, { transaction }))!;
      const cold = coldVoc(Number(stored.panelVocV), stored.vocTempCoeffPctPerC, site.minTempC === null ? null : Number(site.minTempC));
      const message = 'error' in cold ? cold.error : cold.vocMaxV > Number(model.busVMax)
        ? `${ABOVE_RATING}: at ${site.name} the panel's open-circuit voltage in the cold is ${cold.vocMaxV} V, above this model's panel voltage limit of ${Number(model.busVMax)} V`
        : null;
      if (message) throw problems.badRequest(`The logger cannot be moved with this wiring: ${message}.`, [{ path: 'siteId', message }]);
    }
    const from = logger.siteId ? await Site.findByPk(logger.siteId, { transaction }) : null;
    await logger.update({ siteId: site.id }, { transaction });
    await recordActivity(transaction, ctx, {
      action: 'logger.moved',
      targetType: 'logger',
      targetId: logger.id,
      summary: `Logger ${logger.serial} moved from ${from?.name ?? 'no site'} to ${site.name}`,
      details: { fromSiteId: from?.id ?? null, toSiteId: site.id },
    });
    return presentDetail(ctx.actor, logger, deps.now(), transaction);
  });
}

export async function changeProfile(deps: RegistryDeps, ctx: RequestContext, id: string, body: ProfileChangeRequest): Promise<ProfileView> {
  return deps.sequelize.transaction(async (transaction) => {
    const logger = await loggerFor(ctx.actor, id, transaction, 'editProfile');
    if (logger.status !== 'enrolled') {
      throw problems.conflict(`Logger ${logger.serial} is ${logger.status}; a measurement profile belongs to an enrolled logger.`);
    }
    const previous = await latestProfile(logger.id, transaction);
    const install = (logger.install as StoredInstall | null) ?? {};
    const panelWp = body.panelWp ?? previous?.panelWp ?? install.panelWp ?? null;
    const panelVocV = body.panelVocV ?? previous?.panelVocV ?? install.panelVocV ?? null;
    if (panelVocV === null) {
      throw problems.badRequest('Check the body: panelVocV.', [
        { path: 'panelVocV', message: 'give the panel open-circuit voltage: it is checked against the panel voltage limit' },
      ]);
    }
    const vocTempCoeffPctPerC = body.vocTempCoeffPctPerC !== undefined ? body.vocTempCoeffPctPerC : (install.vocTempCoeffPctPerC ?? null);
    const model = (await LoggerModel.findByPk(logger.modelId, { transaction }))!;
    const site = logger.siteId ? await Site.findByPk(logger.siteId, { transaction }) : null;
    const computed = computeProfile({ ...body, panelVocV: Number(panelVocV), vocTempCoeffPctPerC }, model, site);
    const profile = await storeProfile(ctx, logger, computed, { panelWp: panelWp === null ? null : Number(panelWp), panelVocV: Number(panelVocV) }, transaction);
    await logger.update({ install: { ...install, panelWp, panelVocV, vocTempCoeffPctPerC } }, { transaction });
    await recordActivity(transaction, ctx, {
      action: 'profile.changed',
      targetType: 'logger',
      targetId: logger.id,
      summary: `Measurement profile of logger ${logger.serial} changed to v${profile.version} (calibration ${profile.calibration}); sent at its next check-in`,
      details: { version: profile.version },
    });
    return presentProfile(profile);
  });
}
