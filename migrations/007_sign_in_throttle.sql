-- Sign-in failures counted per username and client address (and per address over every username,
-- under the username '*'), so that wrong PINs from one device slow down and lock only that device.
CREATE TABLE sign_in_failures (
  username TEXT NOT NULL,
  address TEXT NOT NULL,
  failures INTEGER NOT NULL,
  last_failure_at INTEGER NOT NULL,
  locked_until INTEGER,
  PRIMARY KEY (username, address)
) STRICT;

-- the per-user lock of 002 is no longer used: a user is never locked out everywhere
UPDATE users SET failed_attempts = 0, locked_until = NULL;
