ALTER TABLE "api_keys" ADD COLUMN "allowed_origins" text[] DEFAULT '{}'::text[] NOT NULL;--> statement-breakpoint
-- A changed origin list is announced like a revocation, so every instance applies it at once.
DROP TRIGGER api_keys_announce_change ON api_keys;
--> statement-breakpoint
CREATE TRIGGER api_keys_announce_change
  AFTER UPDATE OF key_hash, name, display_start, organisation_id, user_id, daily_quota, burst_per_minute, expires_at, revoked_at, allowed_origins OR DELETE
  ON api_keys FOR EACH ROW EXECUTE FUNCTION gammaline_announce_key_change();
