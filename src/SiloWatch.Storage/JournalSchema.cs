namespace SiloWatch.Storage;

/// <summary>
/// The journal's schema as a list of migrations; PRAGMA user_version holds how many have run.
/// Append new steps at the end, never edit a released one.
/// </summary>
internal static class JournalSchema
{
    public static readonly string[] Migrations =
    [
        // 1: the record of alarms, discharge events, calibrations and tares.
        """
        CREATE TABLE alarm_transitions(
            id INTEGER PRIMARY KEY,
            ts_ms INTEGER NOT NULL,
            site TEXT NOT NULL,
            silo TEXT NOT NULL,
            alarm TEXT NOT NULL,
            from_state TEXT NOT NULL,
            to_state TEXT NOT NULL,
            priority INTEGER NOT NULL,
            value REAL,
            limit_value REAL,
            message TEXT NOT NULL,
            user TEXT);
        CREATE TABLE events(
            id INTEGER PRIMARY KEY,
            site TEXT NOT NULL,
            silo TEXT NOT NULL,
            started_ms INTEGER NOT NULL,
            ended_ms INTEGER,
            mass_at_start_kg REAL NOT NULL,
            mass_out_kg REAL NOT NULL,
            mean_rate_kg_s REAL NOT NULL,
            peak_rate_kg_s REAL NOT NULL);
        CREATE TABLE calibrations(
            id INTEGER PRIMARY KEY,
            ts_ms INTEGER NOT NULL,
            site TEXT NOT NULL,
            silo TEXT NOT NULL,
            sensor TEXT NOT NULL,
            parameter TEXT NOT NULL,
            old_value REAL,
            new_value REAL,
            method TEXT NOT NULL,
            user TEXT,
            note TEXT);
        CREATE TABLE tares(
            id INTEGER PRIMARY KEY,
            ts_ms INTEGER NOT NULL,
            site TEXT NOT NULL,
            silo TEXT NOT NULL,
            tare_kg REAL NOT NULL,
            previous_tare_kg REAL NOT NULL,
            user TEXT,
            reason TEXT);
        """,

        // 2: snapshots, so that a restart resumes tare, calibration, alarm states and an event in progress.
        """
        CREATE TABLE snapshots(
            silo_key TEXT NOT NULL,
            kind TEXT NOT NULL,
            json TEXT NOT NULL,
            updated_ms INTEGER NOT NULL,
            PRIMARY KEY(silo_key, kind)) WITHOUT ROWID;
        """,

        // 3: ring asymmetry and free-form details on events; indexes for the review queries.
        """
        ALTER TABLE events ADD COLUMN max_asymmetry_ratio REAL NOT NULL DEFAULT 0;
        ALTER TABLE events ADD COLUMN asymmetry_direction_deg REAL NOT NULL DEFAULT 0;
        ALTER TABLE events ADD COLUMN details_json TEXT NOT NULL DEFAULT '{}';
        CREATE INDEX events_by_silo_time ON events(site, silo, started_ms);
        CREATE INDEX events_by_time ON events(started_ms);
        CREATE INDEX alarms_by_silo_time ON alarm_transitions(site, silo, ts_ms);
        CREATE INDEX alarms_by_time ON alarm_transitions(ts_ms);
        CREATE INDEX calibrations_by_silo_time ON calibrations(site, silo, ts_ms);
        CREATE INDEX tares_by_silo_time ON tares(site, silo, ts_ms);
        """,

        // 4: the severity of an event as columns (for the review filters) and its capture of the silo's series.
        """
        ALTER TABLE events ADD COLUMN max_a2_ratio REAL;
        ALTER TABLE events ADD COLUMN max_peak_over_mean REAL;
        ALTER TABLE events ADD COLUMN max_measured_over_expected REAL;
        ALTER TABLE events ADD COLUMN highest_priority INTEGER;
        ALTER TABLE events ADD COLUMN alarms_raised INTEGER NOT NULL DEFAULT 0;
        CREATE TABLE event_captures(
            event_id INTEGER PRIMARY KEY REFERENCES events(id) ON DELETE CASCADE,
            format INTEGER NOT NULL,
            frames INTEGER NOT NULL,
            channels INTEGER NOT NULL,
            data BLOB NOT NULL);
        CREATE INDEX events_by_priority ON events(highest_priority);
        """,
    ];

    public static int CurrentVersion => Migrations.Length;
}
