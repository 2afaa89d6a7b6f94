import pg from 'pg';
import type { Logger } from 'pino';
import type { Clock } from '../context.ts';

/** The channel the triggers of drizzle/0004 announce key and member changes on. */
export const KEY_CHANGES_CHANNEL = 'gammaline_key_changes';

/**
 * The listening connection is asked a trivial query this often. PostgreSQL delivers notifications on
 * the same connection before its answer, so an answer received at t means every change committed
 * before the question left has been heard. The listener counts as healthy only while the latest answer
 * was asked at most FRESH_MS ago: a silently dead connection stops the cache from being trusted within about
 * a second, long before TCP would notice. Without an answer for HEARTBEAT_TIMEOUT_MS it is rebuilt.
 */
const HEARTBEAT_MS = 300;
const FRESH_MS = 800;
const HEARTBEAT_TIMEOUT_MS = 2_000;
const RECONNECT_MIN_MS = 100;
const RECONNECT_MAX_MS = 5_000;

export interface KeyChangeHandlers {
  /** A `key:<id>` or `user:<id>` payload arrived. */
  changed(payload: string): void;
  /** Further channels heard on the same connection, for other components that listen (the key services wire them). */
  other?: { channels: string[]; notified(channel: string, payload: string): void };
  /** The connection was (re)established: everything announced while it was down is unknown. */
  connected(): void;
  /** The connection is gone; until `connected`, announcements may be missed. */
  lost(): void;
}

/**
 * Holds one dedicated connection (outside the pool) that LISTENs for key changes. `healthy` is true
 * only while that connection is known to work: after LISTEN succeeded, and while heartbeat answers are
 * fresh. When the connection fails the handlers hear `lost`, and it is rebuilt with back-off.
 */
export class KeyChangeListener {
  private client: pg.Client | undefined;
  private heartbeat: NodeJS.Timeout | undefined;
  private retry: NodeJS.Timeout | undefined;
  private retryMs = RECONNECT_MIN_MS;
  private stopped = false;
  private connected = false;
  /** When the latest answered heartbeat was asked (or LISTEN succeeded). */
  private lastAnswerMs = 0;
  private beating = false;

  constructor(
    private readonly options: pg.ClientConfig,
    private readonly handlers: KeyChangeHandlers,
    private readonly logger: Logger,
    private readonly clock: Clock,
  ) {}

  get healthy(): boolean {
    return this.connected && this.clock.nowMs() - this.lastAnswerMs <= FRESH_MS;
  }

  start(): void {
    void this.connect();
  }

  async stop(): Promise<void> {
    this.stopped = true;
    clearTimeout(this.retry);
    this.drop();
  }

  private async connect(): Promise<void> {
    if (this.stopped) return;
    const client = new pg.Client(this.options);
    this.client = client;
    client.on('error', (err) => this.fail(client, err));
    client.on('end', () => this.fail(client, new Error('connection ended')));
    client.on('notification', (message) => {
      if (!message.payload) return;
      if (message.channel === KEY_CHANGES_CHANNEL) this.handlers.changed(message.payload);
      else this.handlers.other?.notified(message.channel, message.payload);
    });
    try {
      await client.connect();
      for (const channel of [KEY_CHANGES_CHANNEL, ...(this.handlers.other?.channels ?? [])]) await client.query(`listen ${channel}`);
    } catch (err) {
      this.fail(client, err);
      return;
    }
    if (this.client !== client || this.stopped) return;
    this.retryMs = RECONNECT_MIN_MS;
    this.connected = true;
    this.lastAnswerMs = this.clock.nowMs();
    this.handlers.connected();
    this.heartbeat = setInterval(() => this.beat(client), HEARTBEAT_MS).unref();
  }

  private beat(client: pg.Client): void {
    if (this.beating) return;
    this.beating = true;
    const askedMs = this.clock.nowMs();
    const late = setTimeout(() => this.fail(client, new Error('heartbeat unanswered')), HEARTBEAT_TIMEOUT_MS).unref();
    client.query('select 1').then(
      () => {
        clearTimeout(late);
        this.beating = false;
        // Everything committed before the question left has been heard by now.
        if (this.client === client) this.lastAnswerMs = askedMs;
      },
      (err: unknown) => {
        clearTimeout(late);
        this.beating = false;
        this.fail(client, err);
      },
    );
  }

  private fail(client: pg.Client, err: unknown): void {
    if (this.client !== client) return;
    const wasHealthy = this.connected;
    this.drop();
    if (this.stopped) return;
    if (wasHealthy) this.logger.warn({ err }, 'lost the key-change listener; verifying keys in the database until it is back');
    this.retry = setTimeout(() => void this.connect(), this.retryMs).unref();
    this.retryMs = Math.min(this.retryMs * 2, RECONNECT_MAX_MS);
  }

  private drop(): void {
    const client = this.client;
    this.client = undefined;
    clearInterval(this.heartbeat);
    this.beating = false;
    if (this.connected) {
      this.connected = false;
      this.handlers.lost();
    }
    if (client) {
      client.removeAllListeners('notification');
      client.on('error', () => {});
      void client.end().catch(() => {});
    }
  }
}
