//! Provenance of a run: version, command, parameters, seed, input digests and stage timings.

use std::fs::File;
use std::io::Read;
use std::path::Path;

use serde::Serialize;
use sha2::{Digest, Sha256};

/// One input file and its SHA-256 digest.
#[derive(Debug, Clone, Serialize)]
pub struct InputDigest {
    /// The participant whose values the file holds (empty for the participants table or a mask).
    pub participant_id: String,
    /// The path as given.
    pub path: String,
    /// Size in bytes.
    pub bytes: u64,
    /// Hex SHA-256 of the file's bytes.
    pub sha256: String,
    /// For a built-in atlas or mask (`path` is then its name as given): the built-in file,
    /// as `<file name> (strata <version>)`; `strata atlases NAME` prints the same digest.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub built_in: Option<String>,
}

/// What produced a run's outputs.
#[derive(Debug, Clone, Serialize)]
pub struct Provenance {
    /// strata's version.
    pub strata_version: String,
    /// The full command line.
    pub command: Vec<String>,
    /// When the run started (UTC, ISO 8601).
    pub started_utc: String,
    /// Worker threads used.
    pub threads: usize,
    /// The run seed.
    pub seed: u64,
    /// Every tunable of the run.
    pub parameters: serde_json::Value,
    /// The participants table, mask and input files with their digests.
    pub inputs: Vec<InputDigest>,
    /// Wall-clock seconds per stage, in pipeline order.
    pub stage_seconds: Vec<(String, f64)>,
    /// Peak resident memory of the process after each stage (bytes, in pipeline order), where
    /// the system reports it (Linux).
    pub stage_peak_memory_bytes: Vec<(String, u64)>,
}

/// Hex SHA-256 of a file and its size.
pub fn file_sha256(path: &Path) -> std::io::Result<(String, u64)> {
    let mut file = File::open(path)?;
    let mut hasher = Sha256::new();
    let mut buffer = vec![0u8; 1 << 20];
    let mut total = 0u64;
    loop {
        let read = file.read(&mut buffer)?;
        if read == 0 {
            break;
        }
        total += read as u64;
        hasher.update(&buffer[..read]);
    }
    let digest = hasher.finalize();
    Ok((digest.iter().map(|byte| format!("{byte:02x}")).collect(), total))
}

/// The current time as `YYYY-MM-DDTHH:MM:SSZ`.
pub fn utc_timestamp() -> String {
    let seconds = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|duration| duration.as_secs() as i64)
        .unwrap_or(0);
    let (days, time_of_day) = (seconds.div_euclid(86_400), seconds.rem_euclid(86_400));
    let (year, month, day) = civil_from_days(days);
    format!(
        "{year:04}-{month:02}-{day:02}T{:02}:{:02}:{:02}Z",
        time_of_day / 3600,
        (time_of_day % 3600) / 60,
        time_of_day % 60
    )
}

/// Days since 1970-01-01 to a proleptic Gregorian date (Hinnant's `civil_from_days` algorithm).
fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let day_of_era = z.rem_euclid(146_097);
    let year_of_era = (day_of_era - day_of_era / 1460 + day_of_era / 36_524 - day_of_era / 146_096) / 365;
    let day_of_year = day_of_era - (365 * year_of_era + year_of_era / 4 - year_of_era / 100);
    let month_index = (5 * day_of_year + 2) / 153;
    let day = (day_of_year - (153 * month_index + 2) / 5 + 1) as u32;
    let month = if month_index < 10 { month_index + 3 } else { month_index - 9 } as u32;
    let year = year_of_era + era * 400 + i64::from(month <= 2);
    (year, month, day)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn civil_dates() {
        // Reference dates: 1970-01-01 is day 0; 2000-03-01 is day 11017 (common practice:
        // Python's datetime.date(2000, 3, 1).toordinal() - date(1970, 1, 1).toordinal()).
        assert_eq!(civil_from_days(0), (1970, 1, 1));
        assert_eq!(civil_from_days(11_017), (2000, 3, 1));
        assert_eq!(civil_from_days(20_789), (2026, 12, 2));
    }

    #[test]
    fn sha256_of_known_text() {
        // FIPS 180-2 example: SHA-256("abc").
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("abc.txt");
        std::fs::write(&path, "abc").unwrap();
        let (digest, bytes) = file_sha256(&path).unwrap();
        assert_eq!(digest, "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
        assert_eq!(bytes, 3);
    }
}
