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
export function sendQuotaWarnings(ctx: Pick<AppContext, 'database' | 'mailer' | 'logger'>, warning: WarningInput): void {
  const quota = warning.key.dailyQuota;
  const thresholds: (80 | 100)[] = [];
  if (!warning.warned80 && warning.used * 100 >= quota * 80) thresholds.push(80);
  if (!warning.warned100 && warning.used >= quota) thresholds.push(100);
  for (const threshold of thresholds) {
    void (async () => {
      if (!(await claimQuotaWarning(ctx.database.db, warning.key.id, warning.day, threshold))) return;
      await ctx.mailer.send(
        quotaWarningMail({ to: warning.key.ownerEmail, organisationId: warning.organisationId, keyName: warning.key.name, displayStart: warning.key.displayStart, used: warning.used, quota, threshold, day: warning.day }),
      );
    })().catch((err: unknown) => ctx.logger.warn({ err, keyId: warning.key.id, threshold }, 'could not send a quota warning'));
  }
}
