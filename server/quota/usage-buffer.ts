import type { BufferedUsage } from './quota.repository.ts';

/**
 * Usage of admitted key calls added up in memory per key, endpoint and day, written by the key leases'
 * flush (one statement per interval instead of one per request). `drain` hands over everything
 * collected so far.
 */
export class UsageBuffer {
  private rows = new Map<string, BufferedUsage>();

  add(u: Omit<BufferedUsage, 'requests'>, requests = 1): void {
    const id = `${u.keyId}|${u.endpoint}|${u.day}`;
    const row = this.rows.get(id);
    if (row) {
      row.units += u.units;
      row.requests += requests;
    } else {
      this.rows.set(id, { ...u, requests });
    }
  }

  get size(): number {
    return this.rows.size;
  }

  drain(): BufferedUsage[] {
    const rows = [...this.rows.values()];
    this.rows = new Map();
    return rows;
  }
}
