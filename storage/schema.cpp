#include "storage/schema.h"

namespace rb::storage {

const std::vector<std::string_view>& Migrations() {
  static const std::vector<std::string_view> kMigrations = {
      // 0 → 1: motors, runs, raw samples (chunked), run events.
      R"sql(
CREATE TABLE motors(
  id INTEGER PRIMARY KEY,
  label TEXT NOT NULL UNIQUE CHECK (length(label) BETWEEN 1 AND 200),
  batch TEXT NOT NULL DEFAULT '',
  notes TEXT NOT NULL DEFAULT '',
  created_utc TEXT NOT NULL);
CREATE INDEX motors_batch ON motors(batch);

CREATE TABLE runs(
  id INTEGER PRIMARY KEY,
  motor_id INTEGER NOT NULL REFERENCES motors(id),
  kind TEXT NOT NULL CHECK (kind IN
    ('spinup','coastdown','locked','steady','generator','free','loaded')),
  status TEXT NOT NULL CHECK (status IN ('recording','complete','interrupted')),
  started_utc TEXT NOT NULL,
  ended_utc TEXT,
  source TEXT NOT NULL DEFAULT '',
  supply_note TEXT NOT NULL DEFAULT '',
  ambient_note TEXT NOT NULL DEFAULT '',
  ambient_c REAL,
  nominal_voltage_v REAL,
  meta_json TEXT NOT NULL DEFAULT '{}',
  sample_count INTEGER NOT NULL DEFAULT 0,
  last_t REAL);
CREATE INDEX runs_motor ON runs(motor_id);

-- Samples: chunks of n records {t, speed, current, voltage}, each an IEEE-754
-- binary64 little-endian (32 bytes per sample); NaN = no reading. Raw, in SI.
CREATE TABLE sample_chunks(
  id INTEGER PRIMARY KEY,
  run_id INTEGER NOT NULL REFERENCES runs(id),
  seq INTEGER NOT NULL,
  n INTEGER NOT NULL CHECK (n > 0),
  t_first REAL NOT NULL,
  t_last REAL NOT NULL,
  data BLOB NOT NULL,
  UNIQUE (run_id, seq));

CREATE TABLE run_events(
  id INTEGER PRIMARY KEY,
  run_id INTEGER NOT NULL REFERENCES runs(id),
  t REAL NOT NULL,
  kind TEXT NOT NULL,
  detail TEXT NOT NULL DEFAULT '');
CREATE INDEX run_events_run ON run_events(run_id);
)sql",
      // 1 → 2: fits, rewind plans, instrument calibrations.
      R"sql(
CREATE TABLE fits(
  id INTEGER PRIMARY KEY,
  motor_id INTEGER NOT NULL REFERENCES motors(id),
  created_utc TEXT NOT NULL,
  model TEXT NOT NULL,
  software_version TEXT NOT NULL,
  result_json TEXT NOT NULL);
CREATE INDEX fits_motor ON fits(motor_id);
CREATE TABLE fit_runs(
  fit_id INTEGER NOT NULL REFERENCES fits(id),
  run_id INTEGER NOT NULL REFERENCES runs(id),
  PRIMARY KEY (fit_id, run_id));

CREATE TABLE rewind_plans(
  id INTEGER PRIMARY KEY,
  motor_id INTEGER REFERENCES motors(id),
  baseline_fit_id INTEGER REFERENCES fits(id),
  created_utc TEXT NOT NULL,
  plan_json TEXT NOT NULL);

CREATE TABLE calibrations(
  id INTEGER PRIMARY KEY,
  instrument TEXT NOT NULL,
  channel TEXT NOT NULL CHECK (channel IN ('current','voltage','speed')),
  gain REAL NOT NULL,
  gain_u REAL NOT NULL,
  offset REAL NOT NULL,
  offset_u REAL NOT NULL,
  created_utc TEXT NOT NULL,
  method TEXT NOT NULL DEFAULT '',
  notes TEXT NOT NULL DEFAULT '');
CREATE INDEX calibrations_channel ON calibrations(instrument, channel);
CREATE TABLE run_calibrations(
  run_id INTEGER NOT NULL REFERENCES runs(id),
  calibration_id INTEGER NOT NULL REFERENCES calibrations(id),
  PRIMARY KEY (run_id, calibration_id));
)sql",
  };
  return kMigrations;
}

}  // namespace rb::storage
