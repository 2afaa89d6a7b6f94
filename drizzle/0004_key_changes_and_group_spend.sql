-- Every change that can make a cached key verification wrong is announced on the channel
-- `gammaline_key_changes`, from a trigger, so the NOTIFY is part of the changing transaction whatever
-- code path made it (console, CLI, invitations, password resets, a cascade). Payloads: `key:<id>`, `user:<id>`.
-- last_used_at is deliberately not in the column list: the usage flush must not empty every cache.
CREATE OR REPLACE FUNCTION gammaline_announce_key_change() RETURNS trigger LANGUAGE plpgsql AS $$
DECLARE
  changed uuid;
BEGIN
  IF TG_OP = 'DELETE' THEN
    changed := OLD.id;
  ELSE
    changed := NEW.id;
  END IF;
  IF TG_TABLE_NAME = 'api_keys' THEN
    PERFORM pg_notify('gammaline_key_changes', 'key:' || changed::text);
  ELSE
    PERFORM pg_notify('gammaline_key_changes', 'user:' || changed::text);
  END IF;
  RETURN NULL;
END
$$;
--> statement-breakpoint
CREATE TRIGGER api_keys_announce_change
  AFTER UPDATE OF key_hash, name, display_start, organisation_id, user_id, daily_quota, burst_per_minute, expires_at, revoked_at OR DELETE
  ON api_keys FOR EACH ROW EXECUTE FUNCTION gammaline_announce_key_change();
--> statement-breakpoint
CREATE TRIGGER users_announce_change
  AFTER UPDATE OF organisation_id, email, role, disabled OR DELETE
  ON users FOR EACH ROW EXECUTE FUNCTION gammaline_announce_key_change();
--> statement-breakpoint
-- Group commit of metered requests of one key: one call decides a whole queue of waiting requests, in
-- arrival order. With p_burst_row, the requests first count as hits of the key's per-minute window
-- (rate_limit_hits, the express-rate-limit store's table); the n-th of them is within the limit when the
-- window's count up to it is. Then, first fit: request i is granted when it is within the burst limit
-- and its units still fit after the ones granted before it, so a request's units are granted all or
-- nothing and the day's total never exceeds the key's current quota (read here, under the day row's
-- lock, so a quota change applies to the very next call). Granted units are added to usage_daily per
-- endpoint in the same transaction. Without p_burst_row (later blocks of an NDJSON stream) no hits count.
CREATE OR REPLACE FUNCTION gammaline_meter_key(
  p_key uuid, p_organisation uuid, p_user uuid, p_day date, p_units integer[], p_endpoints text[],
  p_burst_row text, p_window_ms integer
) RETURNS TABLE (granted boolean[], used integer, quota integer, warned80 boolean, warned100 boolean,
                 hits integer, burst_limit integer, reset_at timestamptz)
LANGUAGE plpgsql AS $$
DECLARE
  v_n integer := coalesce(array_length(p_units, 1), 0);
  v_quota integer;
  v_burst integer;
  v_hits integer;
  v_reset timestamptz;
  v_used integer;
  v_w80 boolean;
  v_w100 boolean;
  v_added integer := 0;
  v_granted boolean[] := '{}';
  i integer;
BEGIN
  SELECT k.daily_quota, k.burst_per_minute INTO v_quota, v_burst FROM api_keys k WHERE k.id = p_key;
  v_quota := coalesce(v_quota, 0);
  v_burst := coalesce(v_burst, 0);
  IF p_burst_row IS NOT NULL THEN
    INSERT INTO rate_limit_hits AS r (key, hits, reset_at)
      VALUES (p_burst_row, v_n, now() + make_interval(secs => p_window_ms::double precision / 1000))
      ON CONFLICT (key) DO UPDATE SET
        hits = CASE WHEN r.reset_at <= now() THEN excluded.hits ELSE r.hits + excluded.hits END,
        reset_at = CASE WHEN r.reset_at <= now() THEN excluded.reset_at ELSE r.reset_at END
      RETURNING r.hits, r.reset_at INTO v_hits, v_reset;
  END IF;
  INSERT INTO key_quota_days (key_id, day, used) VALUES (p_key, p_day, 0) ON CONFLICT DO NOTHING;
  SELECT q.used, q.warned_80_at IS NOT NULL, q.warned_100_at IS NOT NULL INTO v_used, v_w80, v_w100
    FROM key_quota_days q WHERE q.key_id = p_key AND q.day = p_day FOR UPDATE;
  FOR i IN 1 .. v_n LOOP
    IF p_units[i] >= 1
       AND (v_hits IS NULL OR v_hits - v_n + i <= v_burst)
       AND v_used + v_added + p_units[i] <= v_quota THEN
      v_added := v_added + p_units[i];
      v_granted := v_granted || true;
    ELSE
      v_granted := v_granted || false;
    END IF;
  END LOOP;
  IF v_added > 0 THEN
    UPDATE key_quota_days q SET used = q.used + v_added WHERE q.key_id = p_key AND q.day = p_day;
    INSERT INTO usage_daily AS u (organisation_id, user_id, key_id, endpoint, day, units, requests)
      SELECT p_organisation, p_user, p_key, g.endpoint, p_day, sum(g.units)::integer, count(*)::integer
      FROM unnest(p_units, p_endpoints, v_granted) AS g(units, endpoint, ok)
      WHERE g.ok
      GROUP BY g.endpoint
      ON CONFLICT (key_id, endpoint, day) WHERE key_id IS NOT NULL
      DO UPDATE SET units = u.units + excluded.units, requests = u.requests + excluded.requests;
  END IF;
  RETURN QUERY SELECT v_granted, v_used + v_added, v_quota, v_w80, v_w100, v_hits, v_burst, v_reset;
END
$$;
