import type { Response } from 'express';
import type { AppContext } from '../../../context.ts';
import { callerOf } from '../../../auth/caller.ts';
import { ApiError } from '../../../http/problem.ts';
import { secondsUntilUtcMidnight, utcDay } from '../../../quota/day.ts';
import { recordConsoleUsage, spendKeyUnits, unitsUsed } from '../../../quota/quota.repository.ts';
import { sendQuotaWarnings } from '../../../quota/warnings.ts';

/** Units the caller may still spend today; unlimited for console sessions (they are only recorded). */
export async function remainingUnits(ctx: AppContext, res: Response): Promise<number> {
  const key = res.locals.callerLimits?.key;
  if (callerOf(res).kind === 'session' || !key) return Number.POSITIVE_INFINITY;
  const day = utcDay(ctx.clock.now());
  // Units this process reserved and has not spent are still the caller's to spend.
  const unspent = ctx.keyServices.leases.unspent(key.id, day);
  return Math.max(0, key.dailyQuota - (await unitsUsed(ctx.database.db, key.id, day)) + unspent);
}

/**
 * Spends up to `wanted` units for a block of streamed items and returns how many were granted: all of
 * them, or what was left of the daily quota, or 0. Each spend is the quota repository's one atomic
 * statement, so parallel streams of one key never overspend; a spend that loses a race is retried
 * with what is left.
 */
export async function chargeUnits(ctx: AppContext, res: Response, endpoint: string, wanted: number): Promise<number> {
  const caller = callerOf(res);
  const key = res.locals.callerLimits?.key;
  const day = utcDay(ctx.clock.now());
  if (caller.kind === 'session' || !key) {
    await recordConsoleUsage(ctx.database.db, { organisationId: caller.organisationId, userId: caller.userId, endpoint, day, units: wanted });
    return wanted;
  }
  let ask = wanted;
  for (let attempt = 0; attempt < 5 && ask > 0; attempt++) {
    const spent = await spendKeyUnits(ctx.database.db, { keyId: key.id, organisationId: caller.organisationId, userId: caller.userId, endpoint, day, units: ask, quota: key.dailyQuota });
    if (spent.admitted) {
      sendQuotaWarnings(ctx, { organisationId: caller.organisationId, key, day, used: spent.used, warned80: spent.warned80, warned100: spent.warned100 });
      return ask;
    }
    ask = Math.min(ask, key.dailyQuota - spent.used);
    // Units held for single calls of the key, here and in other processes, go back first, so the stream can use them.
    if (attempt === 0) {
      const leases = ctx.keyServices.leases;
      await leases.giveBackKey(key.id);
      await leases.reclaimFromOthers(key.id, day);
      ask = wanted;
    }
  }
  return 0;
}

/** The problem that ends a stream whose key ran out of quota. */
export function quotaSpentProblem(ctx: AppContext, res: Response, nextLine: number) {
  const key = res.locals.callerLimits?.key;
  const now = ctx.clock.now();
  const resetS = secondsUntilUtcMidnight(now);
  return new ApiError(
    'tooManyRequests',
    `Key ${key?.displayStart ?? ''}… has spent its ${key?.dailyQuota ?? ''} calculation units for ${utcDay(now)} (UTC). Lines from ${nextLine} on were not computed; ` +
      `send them again after 00:00 UTC, in ${resetS} s, or ask an admin to raise the quota.`,
  ).toProblem();
}
