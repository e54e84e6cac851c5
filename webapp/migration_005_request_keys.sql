-- Migration step 5: keys of POST requests already applied, so a request the phone sends again
-- (its offline outbox replaying after a lost answer) is answered without being applied twice.
CREATE TABLE request_keys (
    key          TEXT    PRIMARY KEY CHECK (length(key) BETWEEN 8 AND 100),
    -- Method and path the key was first used for, e.g. 'POST /api/days/2026-03-04/visits'.
    target       TEXT    NOT NULL,
    -- SHA-256 of the JSON body in canonical form: the same key with another body is refused.
    body_sha256  TEXT    NOT NULL CHECK (length(body_sha256) = 64),
    created_at   TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX request_keys_by_age ON request_keys (created_at);
