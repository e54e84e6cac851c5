-- Migration step 3: phones paired with `rondo serve --lan`. Only a SHA-256 digest of each
-- access token is kept, so a copy of the database cannot be replayed as a cookie.

CREATE TABLE paired_devices (
    id              INTEGER PRIMARY KEY,
    token_sha256    TEXT    NOT NULL UNIQUE CHECK (length(token_sha256) = 64),
    -- What the browser said it was when it paired, e.g. 'Android, Chrome'; shown on the laptop.
    label           TEXT    NOT NULL DEFAULT '' CHECK (length(label) <= 80),
    paired_from     TEXT    NOT NULL DEFAULT '',
    paired_at       TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    last_seen_at    TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
