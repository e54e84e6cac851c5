-- Migration step 6: a version number on each client and on the settings, raised by every
-- change, so a phone and the laptop editing at once cannot overwrite each other unseen: a
-- change that names the version it was made from is refused (409) once that is out of date.
ALTER TABLE clients ADD COLUMN version INTEGER NOT NULL DEFAULT 1 CHECK (version >= 1);
ALTER TABLE settings ADD COLUMN version INTEGER NOT NULL DEFAULT 1 CHECK (version >= 1);
