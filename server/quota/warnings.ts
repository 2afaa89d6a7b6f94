import type { AppContext } from '../context.ts';
import { quotaWarningMail } from '../mail/messages.ts';
import { claimQuotaWarning } from './quota.repository.ts';

interface WarningInput {
  organisationId: string;
  key: { id: string; name: string; displayStart: string; dailyQuota: number; ownerEmail: string };
  day: string;
  used: number;
  warned80: boolean;
  warned100: boolean;
}

/**
 * Tells the key's owner when the key passes 80 % and when it reaches 100 % of its daily quota,
 * once each per day (the flag is claimed atomically). Runs after the response path: a slow mail
 * server never delays a calculation.
 */
export function sendQuotaWarnings(ctx: AppContext, w: WarningInput): void {
  const quota = w.key.dailyQuota;
  const thresholds: (80 | 100)[] = [];
  if (!w.warned80 && w.used * 100 >= quota * 80) thresholds.push(80);
  if (!w.warned100 && w.used >= quota) thresholds.push(100);
  for (const threshold of thresholds) {
    void (async () => {
      if (!(await claimQuotaWarning(ctx.database.db, w.key.id, w.day, threshold))) return;
      await ctx.mailer.send(
        quotaWarningMail({ to: w.key.ownerEmail, organisationId: w.organisationId, keyName: w.key.name, displayStart: w.key.displayStart, used: w.used, quota, threshold, day: w.day }),
      );
    })().catch((err: unknown) => ctx.logger.warn({ err, keyId: w.key.id, threshold }, 'could not send a quota warning'));
  }
}
