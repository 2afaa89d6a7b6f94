CREATE TABLE "quota_leases" (
	"instance_id" uuid NOT NULL,
	"key_id" uuid NOT NULL,
	"day" date NOT NULL,
	"units" integer DEFAULT 0 NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "quota_leases_instance_id_key_id_day_pk" PRIMARY KEY("instance_id","key_id","day")
);
--> statement-breakpoint
CREATE TABLE "usage_flushes" (
	"instance_id" uuid PRIMARY KEY NOT NULL,
	"seq" bigint NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
ALTER TABLE "captured_mail" ADD COLUMN "organisation_id" uuid;--> statement-breakpoint
ALTER TABLE "quota_leases" ADD CONSTRAINT "quota_leases_key_id_api_keys_id_fk" FOREIGN KEY ("key_id") REFERENCES "public"."api_keys"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "quota_leases_key_day_idx" ON "quota_leases" USING btree ("key_id","day");--> statement-breakpoint
ALTER TABLE "captured_mail" ADD CONSTRAINT "captured_mail_organisation_id_organisations_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisations"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "captured_mail_organisation_idx" ON "captured_mail" USING btree ("organisation_id","received_at");--> statement-breakpoint
-- Quota leases (server/quota/key-leases.ts). A process reserves units for a key and day in one call and
-- spends them in memory; the reservation is added to key_quota_days.used under the day row's lock, so
-- the day's total of spent and reserved units never exceeds the key's current quota, whatever the number
-- of processes. p_need_* is what the requests waiting in that process need now; p_extra_* is how much it
-- would like to hold in advance, of which at most an eighth of what is still free is granted, so that
-- reservations shrink as the quota runs out. Hits count against the key's per-minute window
-- (rate_limit_hits) the same way. `holders` is how many other live processes hold unspent units of
-- this key and day: a process that cannot cover a request asks them to give theirs back first.
CREATE OR REPLACE FUNCTION gammaline_lease_key(
  p_instance uuid, p_key uuid, p_day date, p_need_units integer, p_extra_units integer,
  p_need_hits integer, p_extra_hits integer, p_unspent integer, p_burst_row text, p_window_ms integer
) RETURNS TABLE (granted_units integer, granted_hits integer, used integer, quota integer, warned80 boolean, warned100 boolean,
                 hits integer, burst_limit integer, reset_at timestamptz, holders integer)
LANGUAGE plpgsql AS $$
DECLARE
  v_quota integer;
  v_burst integer;
  v_used integer;
  v_w80 boolean;
  v_w100 boolean;
  v_free integer;
  v_units integer;
  v_hits integer;
  v_reset timestamptz;
  v_free_hits integer;
  v_granted_hits integer;
  v_holders integer;
BEGIN
  SELECT k.daily_quota, k.burst_per_minute INTO v_quota, v_burst FROM api_keys k WHERE k.id = p_key;
  v_quota := coalesce(v_quota, 0);
  v_burst := coalesce(v_burst, 0);
  INSERT INTO key_quota_days (key_id, day, used) VALUES (p_key, p_day, 0) ON CONFLICT DO NOTHING;
  SELECT q.used, q.warned_80_at IS NOT NULL, q.warned_100_at IS NOT NULL INTO v_used, v_w80, v_w100
    FROM key_quota_days q WHERE q.key_id = p_key AND q.day = p_day FOR UPDATE;
  v_free := greatest(0, v_quota - v_used);
  v_units := least(v_free, greatest(0, p_need_units) + least(greatest(0, p_extra_units), greatest(0, v_free - p_need_units) / 8));
  IF v_units > 0 THEN
    UPDATE key_quota_days q SET used = q.used + v_units WHERE q.key_id = p_key AND q.day = p_day;
  END IF;
  IF p_burst_row IS NOT NULL THEN
    INSERT INTO rate_limit_hits AS r (key, hits, reset_at)
      VALUES (p_burst_row, 0, now() + make_interval(secs => p_window_ms::double precision / 1000))
      ON CONFLICT (key) DO UPDATE SET
        hits = CASE WHEN r.reset_at <= now() THEN 0 ELSE r.hits END,
        reset_at = CASE WHEN r.reset_at <= now() THEN excluded.reset_at ELSE r.reset_at END
      RETURNING r.hits, r.reset_at INTO v_hits, v_reset;
    v_free_hits := greatest(0, v_burst - v_hits);
    v_granted_hits := least(v_free_hits, greatest(0, p_need_hits) + least(greatest(0, p_extra_hits), greatest(0, v_free_hits - p_need_hits) / 8));
    IF v_granted_hits > 0 THEN
      UPDATE rate_limit_hits r SET hits = r.hits + v_granted_hits WHERE r.key = p_burst_row RETURNING r.hits INTO v_hits;
    END IF;
  ELSE
    v_granted_hits := greatest(0, p_need_hits) + greatest(0, p_extra_hits);
  END IF;
  INSERT INTO quota_leases AS l (instance_id, key_id, day, units, updated_at)
    VALUES (p_instance, p_key, p_day, greatest(0, p_unspent) + v_units, now())
    ON CONFLICT (instance_id, key_id, day) DO UPDATE SET units = excluded.units, updated_at = excluded.updated_at;
  SELECT count(*)::integer INTO v_holders FROM quota_leases l
    WHERE l.key_id = p_key AND l.day = p_day AND l.instance_id <> p_instance AND l.units > 0
      AND l.updated_at > now() - interval '5 seconds';
  RETURN QUERY SELECT v_units, v_granted_hits, v_used + v_units, v_quota, v_w80, v_w100, v_hits, v_burst, v_reset, v_holders;
END
$$;
--> statement-breakpoint
-- Gives unspent reserved units (and per-minute hits, while their window is still the same one) back,
-- forgets the process's lease row and tells whoever asked for them. Applied only while the lease row
-- exists: a return sent again after a lost answer changes nothing the second time.
CREATE OR REPLACE FUNCTION gammaline_return_lease(
  p_instance uuid, p_key uuid, p_day date, p_units integer, p_burst_row text, p_hits integer, p_reset_at timestamptz
) RETURNS void LANGUAGE plpgsql AS $$
BEGIN
  DELETE FROM quota_leases l WHERE l.instance_id = p_instance AND l.key_id = p_key AND l.day = p_day;
  IF FOUND THEN
    IF p_units > 0 THEN
      UPDATE key_quota_days q SET used = greatest(0, q.used - p_units) WHERE q.key_id = p_key AND q.day = p_day;
    END IF;
    IF p_burst_row IS NOT NULL AND p_hits > 0 AND p_reset_at IS NOT NULL THEN
      UPDATE rate_limit_hits r SET hits = greatest(0, r.hits - p_hits)
        WHERE r.key = p_burst_row AND r.reset_at BETWEEN p_reset_at - interval '1 millisecond' AND p_reset_at + interval '1 millisecond';
    END IF;
  END IF;
  PERFORM pg_notify('gammaline_quota_returned', p_key::text || '/' || to_char(p_day, 'YYYY-MM-DD') || '/' || p_instance::text);
END
$$;
--> statement-breakpoint
-- Writes a process's buffered usage (per key, endpoint and day) and refreshes its lease rows with what it
-- still holds unspent. p_seq numbers the flushes of one process: one sent again after a lost answer is
-- skipped, so no usage is counted twice. Returns whether this call applied the usage.
CREATE OR REPLACE FUNCTION gammaline_flush_usage(
  p_instance uuid, p_seq bigint,
  p_organisations uuid[], p_users uuid[], p_keys uuid[], p_endpoints text[], p_days date[], p_units integer[], p_requests integer[],
  p_lease_keys uuid[], p_lease_days date[], p_lease_units integer[]
) RETURNS boolean LANGUAGE plpgsql AS $$
DECLARE
  v_last bigint;
BEGIN
  INSERT INTO usage_flushes (instance_id, seq, updated_at) VALUES (p_instance, 0, now()) ON CONFLICT DO NOTHING;
  SELECT f.seq INTO v_last FROM usage_flushes f WHERE f.instance_id = p_instance FOR UPDATE;
  IF v_last >= p_seq THEN
    RETURN false;
  END IF;
  UPDATE usage_flushes f SET seq = p_seq, updated_at = now() WHERE f.instance_id = p_instance;
  INSERT INTO usage_daily AS u (organisation_id, user_id, key_id, endpoint, day, units, requests)
    SELECT g.organisation_id, g.user_id, g.key_id, g.endpoint, g.day, g.units, g.requests
    FROM unnest(p_organisations, p_users, p_keys, p_endpoints, p_days, p_units, p_requests)
      AS g(organisation_id, user_id, key_id, endpoint, day, units, requests)
    -- A key or member deleted since (a cascade) takes its usage with it; its rows must not block the rest.
    WHERE EXISTS (SELECT 1 FROM api_keys k WHERE k.id = g.key_id) AND EXISTS (SELECT 1 FROM users m WHERE m.id = g.user_id)
    ON CONFLICT (key_id, endpoint, day) WHERE key_id IS NOT NULL
    DO UPDATE SET units = u.units + excluded.units, requests = u.requests + excluded.requests;
  UPDATE quota_leases l SET units = v.units, updated_at = now()
    FROM unnest(p_lease_keys, p_lease_days, p_lease_units) AS v(key_id, day, units)
    WHERE l.instance_id = p_instance AND l.key_id = v.key_id AND l.day = v.day;
  RETURN true;
END
$$;
