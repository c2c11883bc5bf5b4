//! The delimited reader against csv-spectrum 2.0.0 (npm package `csv-spectrum`, by max ogden,
//! BSD-2-Clause), a published corpus of hard CSV cases with the records a correct parser must
//! produce. Vendored unchanged in tests/fixtures/csv-spectrum (see its README.md).

use std::collections::BTreeMap;
use std::fs;
use std::path::{Path, PathBuf};

use concord::data::{self, Record, SourceOptions};

type Row = BTreeMap<String, String>;

/// Errata of the corpus itself: (file, column, value the CSV really holds). The JSON for
/// location_coordinates gives a phone number that is not the one in its CSV.
const ERRATA: &[(&str, &str, &str)] =
    &[("location_coordinates", "Contact Phone Number", "2095257564")];

fn corpus() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/csv-spectrum")
}

fn expected_rows(name: &str) -> Vec<Row> {
    let text = fs::read_to_string(corpus().join("json").join(format!("{name}.json"))).unwrap();
    let value: serde_json::Value = serde_json::from_str(&text).unwrap();
    // location_coordinates.json is a bare object rather than an array of one.
    let rows = match value {
        serde_json::Value::Array(rows) => rows,
        object => vec![object],
    };
    let mut rows: Vec<Row> = rows
        .into_iter()
        .map(|row| serde_json::from_value(row).unwrap())
        .collect();
    for &(file, column, actual) in ERRATA {
        if file == name {
            for row in &mut rows {
                let value = row.get_mut(column).expect("erratum names a real column");
                assert_ne!(value, actual, "erratum for {file} no longer needed");
                *value = actual.to_string();
            }
        }
    }
    rows
}

fn read_rows(path: &Path) -> Vec<Row> {
    let mut source = data::open(path, &SourceOptions::default()).unwrap();
    let headers = source.headers().expect("header row").to_vec();
    let mut record = Record::new();
    let mut rows = Vec::new();
    while source.read_record(&mut record).unwrap() {
        assert!(!record.invalid_utf8(), "{}", path.display());
        assert_eq!(
            record.len(),
            headers.len(),
            "{} row {}",
            path.display(),
            record.row()
        );
        let row = headers
            .iter()
            .cloned()
            .zip(record.fields().map(str::to_string))
            .collect();
        rows.push(row);
    }
    rows
}

#[test]
fn every_csv_spectrum_file_reads_as_its_json() {
    let mut names: Vec<String> = fs::read_dir(corpus().join("csvs"))
        .unwrap()
        .map(|entry| entry.unwrap().path())
        .filter(|path| path.extension().is_some_and(|ext| ext == "csv"))
        .map(|path| path.file_stem().unwrap().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(names.len(), 12, "the corpus has 12 CSV files");
    for name in &names {
        let actual = read_rows(&corpus().join("csvs").join(format!("{name}.csv")));
        assert_eq!(actual, expected_rows(name), "csv-spectrum file {name}");
    }
}

#[test]
fn crlf_files_really_are_crlf() {
    // Guards the fixtures: a checkout that normalised line endings would make the CRLF cases
    // test nothing.
    for name in ["empty_crlf", "newlines_crlf", "simple_crlf"] {
        let bytes = fs::read(corpus().join("csvs").join(format!("{name}.csv"))).unwrap();
        assert!(
            bytes.windows(2).any(|w| w == b"\r\n"),
            "{name}.csv lost its CRLF"
        );
    }
}

#[test]
fn record_lines_follow_embedded_newlines() {
    let path = corpus().join("csvs/newlines_crlf.csv");
    let mut source = data::open(&path, &SourceOptions::default()).unwrap();
    let mut record = Record::new();
    let mut places = Vec::new();
    while source.read_record(&mut record).unwrap() {
        places.push((record.row(), record.line()));
    }
    // The second record spans lines 3 and 4.
    assert_eq!(places, vec![(1, 2), (2, 3), (3, 5)]);
}
