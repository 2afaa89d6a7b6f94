-- Quota spends without the per-minute window: since quota leases (0005) count burst hits, the burst
-- branch of gammaline_meter_key (0004) has no caller left. Its remaining use, deciding NDJSON blocks and
-- other direct spends in one statement, moves to gammaline_spend_key, which is the same statement
-- without the window: request i is granted in arrival order when its units still fit after the ones
-- granted before it (all or nothing per request), under the day row's lock so that a quota change
-- applies to the very next call, and granted units are added to usage_daily per endpoint in the same
-- transaction. The day's total never exceeds the key's current quota.
DROP FUNCTION IF EXISTS gammaline_meter_key(uuid, uuid, uuid, date, integer[], text[], text, integer);
--> statement-breakpoint
CREATE OR REPLACE FUNCTION gammaline_spend_key(
  p_key uuid, p_organisation uuid, p_user uuid, p_day date, p_units integer[], p_endpoints text[]
) RETURNS TABLE (granted boolean[], used integer, quota integer, warned80 boolean, warned100 boolean)
LANGUAGE plpgsql AS $$
DECLARE
  v_n integer := coalesce(array_length(p_units, 1), 0);
  v_quota integer;
  v_used integer;
  v_w80 boolean;
  v_w100 boolean;
  v_added integer := 0;
  v_granted boolean[] := '{}';
  i integer;
BEGIN
  SELECT k.daily_quota INTO v_quota FROM api_keys k WHERE k.id = p_key;
  v_quota := coalesce(v_quota, 0);
  INSERT INTO key_quota_days (key_id, day, used) VALUES (p_key, p_day, 0) ON CONFLICT DO NOTHING;
  SELECT q.used, q.warned_80_at IS NOT NULL, q.warned_100_at IS NOT NULL INTO v_used, v_w80, v_w100
    FROM key_quota_days q WHERE q.key_id = p_key AND q.day = p_day FOR UPDATE;
  FOR i IN 1 .. v_n LOOP
    IF p_units[i] >= 1 AND v_used + v_added + p_units[i] <= v_quota THEN
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
  RETURN QUERY SELECT v_granted, v_used + v_added, v_quota, v_w80, v_w100;
END
$$;
