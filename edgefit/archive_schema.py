"""The archive's SQL schema as migrations (see :mod:`edgefit.archive` for what each table
holds, and docs/design.md for the schema in full)."""
from __future__ import annotations

#: Schema migrations, applied in order; ``schema_version.version`` is the count applied.
#: Never edit a released entry: append a new one.
MIGRATIONS: list[str] = [
    # 1: the first schema
    """
    CREATE TABLE samples (
        id INTEGER PRIMARY KEY AUTOINCREMENT,
        name TEXT NOT NULL,
        metadata TEXT NOT NULL DEFAULT '{}',
        created TEXT NOT NULL
    );
    CREATE INDEX samples_name ON samples(name);
    CREATE TABLE spectra (
        id INTEGER PRIMARY KEY AUTOINCREMENT,
        sample_id INTEGER NOT NULL REFERENCES samples(id),
        sha256 TEXT NOT NULL,
        file_name TEXT NOT NULL,
        size INTEGER NOT NULL,
        reader TEXT NOT NULL,
        summary TEXT NOT NULL,
        options TEXT NOT NULL DEFAULT '{}',
        created TEXT NOT NULL,
        UNIQUE (sample_id, sha256, reader)
    );
    CREATE INDEX spectra_sample ON spectra(sample_id);
    CREATE INDEX spectra_sha ON spectra(sha256);
    CREATE TABLE jobs (
        id INTEGER PRIMARY KEY AUTOINCREMENT,
        kind TEXT NOT NULL,
        state TEXT NOT NULL,
        done INTEGER NOT NULL DEFAULT 0,
        total INTEGER NOT NULL,
        payload TEXT NOT NULL,
        reason TEXT,
        created TEXT NOT NULL,
        updated TEXT NOT NULL
    );
    CREATE INDEX jobs_state ON jobs(state);
    CREATE TABLE job_items (
        job_id INTEGER NOT NULL REFERENCES jobs(id),
        idx INTEGER NOT NULL,
        spectrum_id INTEGER REFERENCES spectra(id),
        source TEXT NOT NULL DEFAULT '',
        state TEXT NOT NULL,
        fit_id INTEGER,
        error TEXT,
        PRIMARY KEY (job_id, idx)
    );
    CREATE TABLE fits (
        id INTEGER PRIMARY KEY AUTOINCREMENT,
        spectrum_id INTEGER NOT NULL REFERENCES spectra(id),
        job_id INTEGER REFERENCES jobs(id),
        options TEXT NOT NULL,
        result TEXT NOT NULL,
        data TEXT,
        summary TEXT NOT NULL,
        version TEXT NOT NULL,
        created TEXT NOT NULL
    );
    CREATE INDEX fits_spectrum ON fits(spectrum_id);
    CREATE TABLE tokens (
        id INTEGER PRIMARY KEY AUTOINCREMENT,
        name TEXT NOT NULL,
        hash TEXT NOT NULL UNIQUE,
        created TEXT NOT NULL,
        revoked TEXT
    );
    """,
    # 2: per-token access. Tokens have a kind (the tokens of an older archive become admin) and
    # the token that created them; samples, spectra, fits and jobs record the token that made
    # them (NULL for records older than this migration and for the CLI's own writes).
    """
    ALTER TABLE tokens ADD COLUMN kind TEXT NOT NULL DEFAULT 'admin';
    ALTER TABLE tokens ADD COLUMN created_by INTEGER REFERENCES tokens(id);
    ALTER TABLE samples ADD COLUMN created_by INTEGER REFERENCES tokens(id);
    ALTER TABLE spectra ADD COLUMN created_by INTEGER REFERENCES tokens(id);
    ALTER TABLE fits ADD COLUMN created_by INTEGER REFERENCES tokens(id);
    ALTER TABLE jobs ADD COLUMN created_by INTEGER REFERENCES tokens(id);
    """,
]
