-- Migration step 1: the first schema of Rondo's laptop database.
-- Times of day are whole minutes after local midnight; dates are ISO 'YYYY-MM-DD';
-- weekdays are ISO minus one (0 = Monday .. 6 = Sunday); positions are WGS-84 degrees.

-- The rep's settings: exactly one row.
CREATE TABLE settings (
    id              INTEGER PRIMARY KEY CHECK (id = 1),
    rep_name        TEXT    NOT NULL DEFAULT '',
    home_label      TEXT    NOT NULL DEFAULT 'Home',
    home_lat        REAL    CHECK (home_lat BETWEEN -90 AND 90),
    home_lon        REAL    CHECK (home_lon BETWEEN -180 AND 180),
    day_start_min   INTEGER NOT NULL DEFAULT 480 CHECK (day_start_min BETWEEN 0 AND 1440),
    day_end_min     INTEGER NOT NULL DEFAULT 1080 CHECK (day_end_min BETWEEN 0 AND 1440),
    break_min       INTEGER NOT NULL DEFAULT 0 CHECK (break_min BETWEEN 0 AND 480),
    break_from_min  INTEGER NOT NULL DEFAULT 720 CHECK (break_from_min BETWEEN 0 AND 1440),
    break_until_min INTEGER NOT NULL DEFAULT 840 CHECK (break_until_min BETWEEN 0 AND 1440),
    speed_kmh       REAL    NOT NULL DEFAULT 50 CHECK (speed_kmh > 0),
    detour_factor   REAL    NOT NULL DEFAULT 1.3 CHECK (detour_factor >= 1),
    distance_mode   TEXT    NOT NULL DEFAULT 'geodesic'
                            CHECK (distance_mode IN ('geodesic', 'great-circle')),
    objective       TEXT    NOT NULL DEFAULT 'km' CHECK (objective IN ('km', 'return')),
    time_zone       TEXT    NOT NULL DEFAULT 'UTC',
    time_limit_s    REAL    NOT NULL DEFAULT 20 CHECK (time_limit_s > 0),
    is_demo         INTEGER NOT NULL DEFAULT 0 CHECK (is_demo IN (0, 1)),
    CHECK ((home_lat IS NULL) = (home_lon IS NULL))
);
INSERT INTO settings (id) VALUES (1);

CREATE TABLE clients (
    id          INTEGER PRIMARY KEY,
    name        TEXT    NOT NULL UNIQUE COLLATE NOCASE CHECK (length(trim(name)) > 0),
    lat         REAL    NOT NULL CHECK (lat BETWEEN -90 AND 90),
    lon         REAL    NOT NULL CHECK (lon BETWEEN -180 AND 180),
    visit_min   INTEGER NOT NULL CHECK (visit_min BETWEEN 1 AND 720),
    notes       TEXT    NOT NULL DEFAULT '',
    active      INTEGER NOT NULL DEFAULT 1 CHECK (active IN (0, 1)),
    created_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);

-- Opening hours: a weekday with rows here only receives visits starting inside them;
-- a weekday in client_closed_days receives none; any other weekday, any time.
CREATE TABLE client_windows (
    client_id   INTEGER NOT NULL REFERENCES clients (id) ON DELETE CASCADE,
    weekday     INTEGER NOT NULL CHECK (weekday BETWEEN 0 AND 6),
    start_min   INTEGER NOT NULL CHECK (start_min BETWEEN 0 AND 1440),
    end_min     INTEGER NOT NULL CHECK (end_min BETWEEN start_min AND 1440),
    PRIMARY KEY (client_id, weekday, start_min)
);

CREATE TABLE client_closed_days (
    client_id   INTEGER NOT NULL REFERENCES clients (id) ON DELETE CASCADE,
    weekday     INTEGER NOT NULL CHECK (weekday BETWEEN 0 AND 6),
    PRIMARY KEY (client_id, weekday)
);

-- A drive the rep measured, one direction; NULL client id = home.
CREATE TABLE drive_entries (
    id              INTEGER PRIMARY KEY,
    from_client_id  INTEGER REFERENCES clients (id) ON DELETE CASCADE,
    to_client_id    INTEGER REFERENCES clients (id) ON DELETE CASCADE,
    km              REAL CHECK (km >= 0),
    minutes         REAL CHECK (minutes >= 0),
    updated_at      TEXT NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    CHECK (km IS NOT NULL OR minutes IS NOT NULL),
    CHECK (ifnull(from_client_id, 0) <> ifnull(to_client_id, 0))
);
CREATE UNIQUE INDEX drive_entries_pair
    ON drive_entries (ifnull(from_client_id, 0), ifnull(to_client_id, 0));

-- One plan per date: the visits the rep chose for it.
CREATE TABLE day_plans (
    id          INTEGER PRIMARY KEY,
    plan_date   TEXT    NOT NULL UNIQUE CHECK (plan_date GLOB '[0-9][0-9][0-9][0-9]-[0-9][0-9]-[0-9][0-9]'),
    created_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);

CREATE TABLE plan_choices (
    plan_id     INTEGER NOT NULL REFERENCES day_plans (id) ON DELETE CASCADE,
    client_id   INTEGER NOT NULL REFERENCES clients (id),
    added_late  INTEGER NOT NULL DEFAULT 0 CHECK (added_late IN (0, 1)),
    PRIMARY KEY (plan_id, client_id)
);

-- Every solve of a plan, kept so a plan can be explained later: what went in
-- (inputs_json: settings, clients, matrix, start) and what came out.
CREATE TABLE plan_solves (
    id              INTEGER PRIMARY KEY,
    plan_id         INTEGER NOT NULL REFERENCES day_plans (id) ON DELETE CASCADE,
    kind            TEXT    NOT NULL CHECK (kind IN ('day', 'replan')),
    solved_at       TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    feasible        INTEGER NOT NULL CHECK (feasible IN (0, 1)),
    proven_optimal  INTEGER NOT NULL CHECK (proven_optimal IN (0, 1)),
    objective       TEXT    NOT NULL,
    lower_bound     REAL,
    gap             REAL,
    seconds         REAL    NOT NULL,
    method          TEXT    NOT NULL,
    start_min       REAL,
    return_min      REAL,
    total_km        REAL,
    total_drive_min REAL,
    total_wait_min  REAL,
    inputs_json     TEXT    NOT NULL,
    result_json     TEXT    NOT NULL
);

-- The solved order with its times, one row a visit.
CREATE TABLE planned_visits (
    solve_id    INTEGER NOT NULL REFERENCES plan_solves (id) ON DELETE CASCADE,
    seq         INTEGER NOT NULL CHECK (seq >= 1),
    client_id   INTEGER NOT NULL REFERENCES clients (id),
    arrive_min  REAL    NOT NULL,
    wait_min    REAL    NOT NULL,
    start_min   REAL    NOT NULL,
    depart_min  REAL    NOT NULL,
    leg_km      REAL    NOT NULL,
    leg_min     REAL    NOT NULL,
    locked      INTEGER NOT NULL DEFAULT 0 CHECK (locked IN (0, 1)),
    PRIMARY KEY (solve_id, seq)
);

-- What actually happened.
CREATE TABLE visits_done (
    plan_id       INTEGER NOT NULL REFERENCES day_plans (id) ON DELETE CASCADE,
    client_id     INTEGER NOT NULL REFERENCES clients (id),
    arrived_min   INTEGER NOT NULL CHECK (arrived_min BETWEEN 0 AND 1440),
    departed_min  INTEGER NOT NULL CHECK (departed_min BETWEEN arrived_min AND 1440),
    recorded_at   TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    PRIMARY KEY (plan_id, client_id)
);
