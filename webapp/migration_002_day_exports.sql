-- Migration step 2: what each day's calendar export last said, so re-exports keep identity.
-- One row per plan date (not per day_plans row: calendar UIDs are built from the date, so a
-- plan made again for the same date must continue its SEQUENCE, never restart it).

CREATE TABLE day_exports (
    plan_date       TEXT    PRIMARY KEY
                            CHECK (plan_date GLOB '[0-9][0-9][0-9][0-9]-[0-9][0-9]-[0-9][0-9]'),
    -- RFC 5545 §3.8.7.4 SEQUENCE of the last calendar export of this date.
    sequence        INTEGER NOT NULL CHECK (sequence >= 0),
    -- The stops' order and whole-minute times as JSON: equal means "plan unchanged".
    signature       TEXT    NOT NULL,
    -- The visit stops the calendar now holds for this date (planned, cancelled, done) as JSON.
    stops_json      TEXT    NOT NULL,
    include_travel  INTEGER NOT NULL CHECK (include_travel IN (0, 1)),
    exported_at     TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
