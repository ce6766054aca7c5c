-- The set-up page lists each person's last sign-in and each machine token's last use. Sessions are
-- pruned, so the last sign-in is kept on the user; a token's use is written at most once a minute.
ALTER TABLE users ADD COLUMN last_sign_in_at INTEGER;
ALTER TABLE tokens ADD COLUMN last_used_at INTEGER;
UPDATE users SET last_sign_in_at = (SELECT MAX(created_at) FROM sessions WHERE sessions.user_id = users.id);

-- A baseline's checks the quality manager left out of a version, each with its reason: JSON
-- [{ "checkId": 1, "reason": "..." }].
ALTER TABLE limit_versions ADD COLUMN excluded TEXT NOT NULL DEFAULT '[]';
