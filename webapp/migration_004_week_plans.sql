-- Migration step 4: week plans. Which clients are due in the week named by its Monday, on
-- which working days, with which caps and pins; and every week solve with what went in and
-- what came out. The chosen visits of each day live in day_plans / plan_choices as before.

CREATE TABLE week_plans (
    id            INTEGER PRIMARY KEY,
    monday        TEXT    NOT NULL UNIQUE
                          CHECK (monday GLOB '[0-9][0-9][0-9][0-9]-[0-9][0-9]-[0-9][0-9]'),
    -- Caps for every working day; NULL = no cap.
    max_visits    INTEGER CHECK (max_visits IS NULL OR max_visits >= 1),
    max_work_min  REAL    CHECK (max_work_min IS NULL OR (max_work_min > 0 AND max_work_min <= 1440)),
    created_at    TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at    TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);

-- The working days of the week (0 = Monday .. 6 = Sunday).
CREATE TABLE week_days (
    week_id     INTEGER NOT NULL REFERENCES week_plans (id) ON DELETE CASCADE,
    weekday     INTEGER NOT NULL CHECK (weekday BETWEEN 0 AND 6),
    PRIMARY KEY (week_id, weekday)
);

-- The clients due: how many visits, at least how many working days apart, an optional pin.
CREATE TABLE week_clients (
    week_id       INTEGER NOT NULL REFERENCES week_plans (id) ON DELETE CASCADE,
    client_id     INTEGER NOT NULL REFERENCES clients (id),
    visits        INTEGER NOT NULL DEFAULT 1 CHECK (visits BETWEEN 1 AND 7),
    min_gap_days  INTEGER NOT NULL DEFAULT 1 CHECK (min_gap_days BETWEEN 1 AND 6),
    pin_weekday   INTEGER CHECK (pin_weekday IS NULL OR pin_weekday BETWEEN 0 AND 6),
    added_late    INTEGER NOT NULL DEFAULT 0 CHECK (added_late IN (0, 1)),
    PRIMARY KEY (week_id, client_id)
);

-- Every week solve ('week': the whole week worked out; 'move': a visit moved by hand).
CREATE TABLE week_solves (
    id              INTEGER PRIMARY KEY,
    week_id         INTEGER NOT NULL REFERENCES week_plans (id) ON DELETE CASCADE,
    kind            TEXT    NOT NULL CHECK (kind IN ('week', 'move')),
    solved_at       TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    proven_optimal  INTEGER NOT NULL CHECK (proven_optimal IN (0, 1)),
    method          TEXT    NOT NULL,
    total_km        REAL    NOT NULL,
    total_drive_min REAL    NOT NULL,
    lower_bound     REAL,
    gap             REAL,
    bound_note      TEXT    NOT NULL DEFAULT '',
    seconds         REAL    NOT NULL,
    inputs_json     TEXT    NOT NULL,
    result_json     TEXT    NOT NULL
);

-- Which client each solve put on which working day, one row a visit.
CREATE TABLE week_solve_visits (
    solve_id    INTEGER NOT NULL REFERENCES week_solves (id) ON DELETE CASCADE,
    weekday     INTEGER NOT NULL CHECK (weekday BETWEEN 0 AND 6),
    client_id   INTEGER NOT NULL REFERENCES clients (id),
    PRIMARY KEY (solve_id, weekday, client_id)
);
