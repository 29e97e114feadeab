//! Drift, steps and projected limit crossings over one circuit's series of readings.
//! Pure: series in, findings out.
