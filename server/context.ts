import type { Logger } from 'pino';
import type { AppConfig } from './config.ts';
import type { Database } from './db/client.ts';
import type { Mailer } from './mail/mailer.ts';

export interface Clock {
  now(): Date;
}

export const systemClock: Clock = { now: () => new Date() };

/** What every router receives from `createApp`; nothing in the server reaches for globals. */
export interface AppContext {
  database: Database;
  config: AppConfig;
  clock: Clock;
  logger: Logger;
  /** Outgoing mail: the local capture server in local mode, SMTP_URL otherwise. */
  mailer: Mailer;
}
