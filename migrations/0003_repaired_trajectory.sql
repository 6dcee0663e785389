-- The repaired trajectory of each report: a gzipped CSV in the blob store, content-addressed by this SHA-256.
-- Null for reports recorded before the worker produced it, or when none was produced.
ALTER TABLE reports ADD COLUMN repaired_csv_sha256 TEXT CHECK (repaired_csv_sha256 IS NULL OR length(repaired_csv_sha256) = 64);
CREATE INDEX reports_repaired_csv ON reports (repaired_csv_sha256) WHERE repaired_csv_sha256 IS NOT NULL;
-- Blob references are looked up by hash when a blob is removed.
CREATE INDEX runs_sha256 ON runs (sha256);
