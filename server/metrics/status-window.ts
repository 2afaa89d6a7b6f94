import type { Clock } from '../context.ts';
import type { AppMetrics } from './app-metrics.ts';

/** Rates cover about this much of the recent past (longer when nobody asked for a while). */
export const STATUS_WINDOW_MS = 60_000;
/** Readings closer together than this share one snapshot, so a busy Status page costs nothing more. */
const MIN_SNAPSHOT_GAP_MS = 1_000;

/** Totals of the app's counters at one moment. */
interface Snapshot {
  atMs: number;
  requests: number;
  serverErrors: number;
  refusals: number;
  shed: number;
  unitsSpent: number;
  unitsRefused: number;
  /** Cumulative request counts per latency bucket (upper bounds in `bounds`). */
  buckets: number[];
}

export interface ServiceFigures {
  windowS: number;
  requestsPerS: number;
  /** Shares of the window's answers: 5xx, and 429. */
  serverErrorShare: number;
  refusalShare: number;
  shedPerS: number;
  p95LatencyMs: number | null;
  unitsSpentPerS: number;
  unitsRefusedPerS: number;
  inFlight: number;
  eventLoopDelayMs: number;
  database: { connections: number; inUse: number; idle: number; waiting: number; max: number };
  uptimeS: number;
}

/**
 * The live figures of the console's Status page, worked out from the app's own registry. Rates are
 * differences between snapshots of the counters, taken only when someone asks (no timer) and kept
 * for about STATUS_WINDOW_MS; the first answer covers the time since the app started.
 */
export class StatusWindow {
  private readonly snapshots: Snapshot[];
  private bounds: number[] = [];

  constructor(
    private readonly metrics: AppMetrics,
    private readonly clock: Clock,
  ) {
    // The app's counters start at zero with the app.
    this.snapshots = [{ atMs: clock.nowMs(), requests: 0, serverErrors: 0, refusals: 0, shed: 0, unitsSpent: 0, unitsRefused: 0, buckets: [] }];
  }

  async figures(): Promise<ServiceFigures> {
    const now = await this.snapshot();
    const latest = this.snapshots[this.snapshots.length - 1]!;
    if (now.atMs - latest.atMs >= MIN_SNAPSHOT_GAP_MS) this.snapshots.push(now);
    while (this.snapshots.length > 2 && now.atMs - this.snapshots[1]!.atMs >= STATUS_WINDOW_MS) this.snapshots.shift();
    const base = this.snapshots[0]!;
    const seconds = Math.max(0.001, (now.atMs - base.atMs) / 1000);
    const requests = now.requests - base.requests;
    const pool = this.metrics.pool;
    const total = pool?.totalCount ?? 0;
    const idle = pool?.idleCount ?? 0;
    return {
      windowS: round(seconds, 1),
      requestsPerS: round(requests / seconds, 2),
      serverErrorShare: requests > 0 ? round((now.serverErrors - base.serverErrors) / requests, 4) : 0,
      refusalShare: requests > 0 ? round((now.refusals - base.refusals) / requests, 4) : 0,
      shedPerS: round((now.shed - base.shed) / seconds, 2),
      p95LatencyMs: this.quantileMs(base.buckets, now.buckets, 0.95),
      unitsSpentPerS: round((now.unitsSpent - base.unitsSpent) / seconds, 2),
      unitsRefusedPerS: round((now.unitsRefused - base.unitsRefused) / seconds, 2),
      inFlight: this.metrics.inFlight(),
      eventLoopDelayMs: round(this.metrics.eventLoopDelayMs(), 1),
      database: { connections: total, inUse: total - idle, idle, waiting: pool?.waitingCount ?? 0, max: pool?.options.max ?? 0 },
      uptimeS: Math.round(process.uptime()),
    };
  }

  private async snapshot(): Promise<Snapshot> {
    const [duration, shed, spent, refused] = await Promise.all([
      this.metrics.requestDuration.get(),
      this.metrics.requestsShed.get(),
      this.metrics.unitsSpent.get(),
      this.metrics.unitsRefused.get(),
    ]);
    let requests = 0;
    let serverErrors = 0;
    let refusals = 0;
    const byBound = new Map<number, number>();
    for (const v of duration.values) {
      if (v.metricName?.endsWith('_count')) {
        const status = Number(v.labels.status);
        requests += v.value;
        if (status >= 500) serverErrors += v.value;
        else if (status === 429) refusals += v.value;
      } else if (v.metricName?.endsWith('_bucket')) {
        const bound = (v.labels as Record<string, string | number | undefined>).le;
        const le = bound === '+Inf' ? Number.POSITIVE_INFINITY : Number(bound);
        byBound.set(le, (byBound.get(le) ?? 0) + v.value);
      }
    }
    if (byBound.size > 0 && this.bounds.length === 0) this.bounds = [...byBound.keys()].sort((a, b) => a - b);
    const sum = (values: { value: number }[]) => values.reduce((s, v) => s + v.value, 0);
    return {
      atMs: this.clock.nowMs(),
      requests,
      serverErrors,
      refusals,
      shed: sum(shed.values),
      unitsSpent: sum(spent.values),
      unitsRefused: sum(refused.values),
      buckets: this.bounds.map((b) => byBound.get(b) ?? 0),
    };
  }

  /** The quantile of the window's latencies, interpolated within its bucket as Prometheus' histogram_quantile does. */
  private quantileMs(before: number[], after: number[], q: number): number | null {
    const counts = this.bounds.map((_, i) => (after[i] ?? 0) - (before[i] ?? 0));
    const total = counts[counts.length - 1] ?? 0;
    if (total <= 0) return null;
    const rank = q * total;
    for (let i = 0; i < counts.length; i++) {
      if (counts[i]! < rank) continue;
      const upper = this.bounds[i]!;
      const lower = i === 0 ? 0 : this.bounds[i - 1]!;
      // Above the highest finite bound the best statement is that bound.
      if (!Number.isFinite(upper)) return round(lower * 1000, 1);
      const below = i === 0 ? 0 : counts[i - 1]!;
      const inBucket = counts[i]! - below;
      const share = inBucket > 0 ? (rank - below) / inBucket : 1;
      return round((lower + (upper - lower) * share) * 1000, 1);
    }
    return null;
  }
}

function round(value: number, digits: number): number {
  const f = 10 ** digits;
  return Math.round(value * f) / f;
}
