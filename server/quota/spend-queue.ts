import type { Db } from '../db/client.ts';
import { meterKeyGroup, type KeySpend, type KeySpendResult } from './quota.repository.ts';

/** Most requests one statement decides; a longer queue is served by the next statements. */
const MAX_GROUP = 2_000;

/** One metered request of a key: its quota spend, and the per-minute window it counts against. */
export interface MeteredSpend extends KeySpend {
  burst?: { row: string; windowMs: number };
}

export interface MeterDecision {
  spend: KeySpendResult;
  /** This request's place in the per-minute window (as express-rate-limit would have counted it). */
  burst?: { totalHits: number; limit: number; resetAt: Date };
}

interface Waiting {
  spend: MeteredSpend;
  resolve(decision: MeterDecision): void;
  reject(err: unknown): void;
}

/**
 * Group commit of metered requests, per key and day: while a statement for a key is running, the
 * requests that arrive for it wait; when it returns, ONE statement (meterKeyGroup) counts their burst
 * hits and decides their spends in arrival order. A lone request goes out at once, so an idle key pays
 * no extra latency, and a busy key costs one statement per round trip instead of two per request.
 *
 * Exactness does not depend on this queue: every decision is made by the database under row locks, so
 * several processes (each with its own queue) can never overspend a key or exceed its burst together.
 */
export class KeySpendQueue {
  private readonly waiting = new Map<string, Waiting[]>();
  private readonly running = new Set<string>();

  constructor(private readonly db: Db) {}

  spend(spend: MeteredSpend): Promise<MeterDecision> {
    const id = `${spend.keyId}/${spend.day}/${spend.burst?.row ?? ''}`;
    return new Promise<MeterDecision>((resolve, reject) => {
      let queue = this.waiting.get(id);
      if (!queue) {
        queue = [];
        this.waiting.set(id, queue);
      }
      queue.push({ spend, resolve, reject });
      if (!this.running.has(id)) void this.run(id);
    });
  }

  private async run(id: string): Promise<void> {
    this.running.add(id);
    try {
      for (;;) {
        const queue = this.waiting.get(id);
        if (!queue || queue.length === 0) break;
        const group = queue.splice(0, MAX_GROUP);
        if (queue.length === 0) this.waiting.delete(id);
        const first = group[0]!.spend;
        try {
          const { results, burst } = await meterKeyGroup(this.db, {
            keyId: first.keyId,
            organisationId: first.organisationId,
            userId: first.userId,
            day: first.day,
            requests: group.map((w) => ({ units: w.spend.units, endpoint: w.spend.endpoint })),
            burst: first.burst,
          });
          group.forEach((w, i) =>
            w.resolve({
              spend: results[i]!,
              burst: burst && { totalHits: burst.hits - group.length + i + 1, limit: burst.limit, resetAt: burst.resetAt },
            }),
          );
        } catch (err) {
          for (const w of group) w.reject(err);
        }
      }
    } finally {
      this.running.delete(id);
    }
  }
}
