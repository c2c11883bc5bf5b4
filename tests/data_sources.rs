//! Record sources end to end through the public API: layouts, encodings, compression,
//! standard-input-style readers, and the errors a user sees. Inputs are written to fresh
//! temporary directories so each test states its bytes in full.

use std::io::{Cursor, Write};
use std::path::{Path, PathBuf};

use concord::data::{
    self, DataError, Encoding, FixedField, Layout, LengthProblem, Record, RecordSource,
    SourceOptions,
};
use flate2::write::GzEncoder;
use flate2::Compression;
use miette::Diagnostic;

fn delimited(delimiter: u8, quote: u8, header: bool, encoding: Encoding) -> SourceOptions {
    SourceOptions {
        layout: Layout::Delimited {
            delimiter,
            quote,
            header,
        },
        encoding,
    }
}

fn csv() -> SourceOptions {
    SourceOptions::default()
}

fn fixed(fields: &[(usize, usize)]) -> SourceOptions {
    SourceOptions {
        layout: Layout::Fixed {
            fields: fields
                .iter()
                .map(|&(start, end)| FixedField { start, end })
                .collect(),
        },
        encoding: Encoding::Utf8,
    }
}

fn write_file(dir: &Path, name: &str, bytes: &[u8]) -> PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, bytes).unwrap();
    path
}

fn gzip(bytes: &[u8]) -> Vec<u8> {
    let mut encoder = GzEncoder::new(Vec::new(), Compression::default());
    encoder.write_all(bytes).unwrap();
    encoder.finish().unwrap()
}

fn from_bytes(bytes: &[u8], options: &SourceOptions) -> Result<RecordSource, DataError> {
    data::from_reader(
        "test.csv".to_string(),
        Box::new(Cursor::new(bytes.to_vec())),
        options,
    )
}

/// One record as plain data: (row, line, fields, invalid UTF-8, length problem).
#[derive(Debug, PartialEq)]
struct Seen {
    row: u64,
    line: u64,
    fields: Vec<String>,
    invalid_utf8: bool,
    length: Option<LengthProblem>,
}

fn seen(row: u64, line: u64, fields: &[&str]) -> Seen {
    Seen {
        row,
        line,
        fields: fields.iter().map(|f| f.to_string()).collect(),
        invalid_utf8: false,
        length: None,
    }
}

fn read_all(source: &mut RecordSource) -> Vec<Seen> {
    let mut record = Record::new();
    let mut out = Vec::new();
    while source.read_record(&mut record).unwrap() {
        out.push(Seen {
            row: record.row(),
            line: record.line(),
            fields: record.fields().map(str::to_string).collect(),
            invalid_utf8: record.invalid_utf8(),
            length: record.length_problem(),
        });
    }
    out
}

fn read_bytes(bytes: &[u8], options: &SourceOptions) -> Vec<Seen> {
    read_all(&mut from_bytes(bytes, options).unwrap())
}

fn headers(source: &RecordSource) -> Vec<&str> {
    source
        .headers()
        .unwrap()
        .iter()
        .map(String::as_str)
        .collect()
}

#[test]
fn utf8_bom_is_not_part_of_the_first_header() {
    let source = from_bytes(b"\xef\xbb\xbfid, name \n1,a\n", &csv()).unwrap();
    assert_eq!(headers(&source), ["id", "name"]);
}

#[test]
fn crlf_and_lf_read_alike_with_true_line_numbers() {
    let lf = read_bytes(b"id,x\n1,a\n\n2,\"b\nc\"\n3,d", &csv());
    let crlf = read_bytes(b"id,x\r\n1,a\r\n\r\n2,\"b\r\nc\"\r\n3,d\r\n", &csv());
    // The empty line 3 is skipped (csv crate default) but still counts as a line.
    assert_eq!(
        lf,
        vec![
            seen(1, 2, &["1", "a"]),
            seen(2, 4, &["2", "b\nc"]),
            seen(3, 6, &["3", "d"])
        ]
    );
    assert_eq!(
        crlf,
        vec![
            seen(1, 2, &["1", "a"]),
            seen(2, 4, &["2", "b\r\nc"]),
            seen(3, 6, &["3", "d"])
        ]
    );
}

#[test]
fn tab_separated_values() {
    let mut source = from_bytes(
        b"id\tcity\n1\tAnytown, WW\n",
        &delimited(b'\t', b'"', true, Encoding::Utf8),
    )
    .unwrap();
    assert_eq!(headers(&source), ["id", "city"]);
    assert_eq!(
        read_all(&mut source),
        vec![seen(1, 2, &["1", "Anytown, WW"])]
    );
}

#[test]
fn without_a_header_the_first_line_is_row_one() {
    let mut source =
        from_bytes(b"1,a\n2,b\n", &delimited(b',', b'"', false, Encoding::Utf8)).unwrap();
    assert_eq!(source.headers(), None);
    assert_eq!(
        read_all(&mut source),
        vec![seen(1, 1, &["1", "a"]), seen(2, 2, &["2", "b"])]
    );
}

#[test]
fn single_quote_as_quote_character() {
    let options = delimited(b',', b'\'', true, Encoding::Utf8);
    let mut source = from_bytes(b"'id','note'\n1,'it''s, fine'\n2,\"x\"\n", &options).unwrap();
    assert_eq!(headers(&source), ["id", "note"]);
    assert_eq!(
        read_all(&mut source),
        vec![
            seen(1, 2, &["1", "it's, fine"]),
            seen(2, 3, &["2", "\"x\""])
        ]
    );
}

#[test]
fn ragged_rows_are_passed_through() {
    let rows = read_bytes(b"a,b,c\n1,2\n1,2,3,4\n", &csv());
    assert_eq!(
        rows,
        vec![seen(1, 2, &["1", "2"]), seen(2, 3, &["1", "2", "3", "4"])]
    );
}

#[test]
fn latin1_maps_each_byte_to_the_same_code_point() {
    // ISO-8859-1: 0xE9 is U+00E9 'é'; 0x80 stays the C1 control U+0080, not '€'.
    let options = delimited(b',', b'"', true, Encoding::Latin1);
    let mut source = from_bytes(b"nom,x\nRen\xe9,\x80\n", &options).unwrap();
    assert_eq!(headers(&source), ["nom", "x"]);
    assert_eq!(read_all(&mut source), vec![seen(1, 2, &["René", "\u{80}"])]);
}

#[test]
fn windows_1252_follows_the_whatwg_index() {
    // WHATWG Encoding Standard, index-windows-1252: 0x80 -> U+20AC EURO SIGN,
    // 0x9F -> U+0178 LATIN CAPITAL LETTER Y WITH DIAERESIS, 0xE9 -> U+00E9.
    let options = delimited(b',', b'"', false, Encoding::Windows1252);
    assert_eq!(
        read_bytes(b"\x80,\x9f,\xe9\n", &options),
        vec![seen(1, 1, &["€", "Ÿ", "é"])]
    );
}

#[test]
fn invalid_utf8_is_flagged_and_reading_goes_on() {
    let rows = read_bytes(b"id,name\n1,ok\n2,bad\xff\xfename\n3,\xc3\xa9\n", &csv());
    assert_eq!(rows.len(), 3);
    assert_eq!(rows[0], seen(1, 2, &["1", "ok"]));
    assert!(rows[1].invalid_utf8);
    assert_eq!(rows[1].fields, ["2", "bad\u{fffd}\u{fffd}name"]);
    assert_eq!((rows[1].row, rows[1].line), (2, 3));
    // The next row is valid again: the flag does not stick to the reused record.
    assert_eq!(rows[2], seen(3, 4, &["3", "é"]));
}

#[test]
fn a_character_split_by_a_delimiter_is_invalid() {
    // Without the comma the bytes would be a valid 'é'; each field alone is not UTF-8.
    let rows = read_bytes(b"a,b\n\xc3,\xa9\n", &csv());
    assert!(rows[0].invalid_utf8);
    assert_eq!(rows[0].fields, ["\u{fffd}", "\u{fffd}"]);
}

#[test]
fn gzip_files_are_recognised_by_their_magic_bytes() {
    let dir = tempfile::tempdir().unwrap();
    let plain = b"id,x\n1,a\n2,b\n";
    // Two gzip members back to back, as `cat a.gz b.gz` makes.
    let mut bytes = gzip(b"id,x\n1,a\n");
    bytes.extend(gzip(b"2,b\n"));
    let path = write_file(dir.path(), "delivery.csv", &bytes);
    let mut source = data::open(&path, &csv()).unwrap();
    assert_eq!(source.total_bytes(), Some(bytes.len() as u64));
    assert_eq!(headers(&source), ["id", "x"]);
    let rows = read_all(&mut source);
    assert_eq!(rows, vec![seen(1, 2, &["1", "a"]), seen(2, 3, &["2", "b"])]);
    assert_eq!(source.bytes_read(), bytes.len() as u64);
    assert_ne!(bytes.len(), plain.len());
}

#[test]
fn gzip_and_plain_bytes_from_a_reader() {
    // What `open("-")` does with standard input, through a reader we control.
    let gz = gzip("id;nom\n1;Zoë\n".as_bytes());
    let options = delimited(b';', b'"', true, Encoding::Utf8);
    let mut source =
        data::from_reader("<stdin>".into(), Box::new(Cursor::new(gz)), &options).unwrap();
    assert_eq!(source.total_bytes(), None);
    assert_eq!(read_all(&mut source), vec![seen(1, 2, &["1", "Zoë"])]);

    let mut source =
        data::from_reader("<stdin>".into(), Box::new(&b"id\n7\n"[..]), &csv()).unwrap();
    assert_eq!(read_all(&mut source), vec![seen(1, 2, &["7"])]);
}

#[test]
fn truncated_gzip_is_an_error_not_a_panic() {
    // Varied rows so the compressed stream is long enough to cut in the middle of the data.
    let text: String = (0..5000)
        .map(|i| format!("{i},{}\n", i * 7919 % 10007))
        .collect();
    let mut bytes = gzip(format!("id,x\n{text}").as_bytes());
    bytes.truncate(bytes.len() / 2);
    // Depending on where the cut falls the error comes while reading the header or later.
    let error = match from_bytes(&bytes, &csv()) {
        Err(error) => error,
        Ok(mut source) => {
            let mut record = Record::new();
            loop {
                match source.read_record(&mut record) {
                    Ok(true) => continue,
                    Ok(false) => panic!("a truncated gzip file must not read to a clean end"),
                    Err(error) => break error,
                }
            }
        }
    };
    assert!(matches!(error, DataError::Gzip { .. }), "{error:?}");
    assert!(error.to_string().starts_with("test.csv: line "), "{error}");
    assert_eq!(error.code().unwrap().to_string(), "concord::data::gzip");
}

#[test]
fn fixed_width_slices_trims_and_flags_short_lines() {
    let options = fixed(&[(1, 3), (4, 5), (6, 10)]);
    let rows = read_bytes(b"001 7hello\n002 8hi\r\n003\n\n", &options);
    assert_eq!(rows[0], seen(1, 1, &["001", "7", "hello"]));
    assert_eq!(
        rows[1],
        Seen {
            length: Some(LengthProblem {
                actual: 7,
                expected: 10
            }),
            ..seen(2, 2, &["002", "8", "hi"])
        }
    );
    // Fields wholly past the end of the line read as empty.
    assert_eq!(rows[2].fields, ["003", "", ""]);
    assert!(rows[2].length.unwrap().is_short());
    // The trailing empty line is not a record.
    assert_eq!(rows.len(), 3);
}

#[test]
fn fixed_width_counts_characters_not_bytes() {
    let options = fixed(&[(1, 4), (5, 6), (7, 7)]);
    let rows = read_bytes("Zoë 42X\nJo  43Y\n".as_bytes(), &options);
    assert_eq!(
        rows,
        vec![
            seen(1, 1, &["Zoë", "42", "X"]),
            seen(2, 2, &["Jo", "43", "Y"])
        ]
    );
}

#[test]
fn fixed_width_in_a_legacy_encoding_with_bad_bytes_elsewhere() {
    let options = SourceOptions {
        encoding: Encoding::Latin1,
        ..fixed(&[(1, 4), (5, 5)])
    };
    let rows = read_bytes(b"Ren\xe91\n", &options);
    assert_eq!(rows, vec![seen(1, 1, &["René", "1"])]);

    let rows = read_bytes(b"ab\xffc1\n", &fixed(&[(1, 4), (5, 5)]));
    assert!(rows[0].invalid_utf8);
    assert_eq!(rows[0].fields, ["ab\u{fffd}c", "1"]);
}

#[test]
fn empty_files_are_errors() {
    let dir = tempfile::tempdir().unwrap();
    let path = write_file(dir.path(), "x.csv", b"");
    let error = data::open(&path, &csv()).err().unwrap();
    assert_eq!(
        error.to_string(),
        format!("{} is empty: no header row", path.display())
    );
    assert_eq!(error.code().unwrap().to_string(), "concord::data::empty");
    assert!(error.help().is_some());

    // Only a BOM and blank lines: still no header row.
    assert!(matches!(
        from_bytes(b"\xef\xbb\xbf\n\r\n", &csv()),
        Err(DataError::Empty { .. })
    ));
    let gz = write_file(dir.path(), "x.csv.gz", &gzip(b""));
    assert!(matches!(
        data::open(&gz, &csv()),
        Err(DataError::Empty { .. })
    ));
    assert!(matches!(
        from_bytes(b"", &fixed(&[(1, 2)])),
        Err(DataError::Empty {
            what: "no records",
            ..
        })
    ));
}

#[test]
fn a_directory_is_not_a_data_file() {
    let dir = tempfile::tempdir().unwrap();
    let error = data::open(dir.path(), &csv()).err().unwrap();
    assert_eq!(
        error.to_string(),
        format!("{} is a directory, not a data file", dir.path().display())
    );
}

#[test]
fn a_missing_file_names_the_path_and_the_reason() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("x.csv");
    let error = data::open(&path, &csv()).err().unwrap();
    assert_eq!(
        error.to_string(),
        format!(
            "cannot open data file `{}`: No such file or directory",
            path.display()
        )
    );
    assert_eq!(error.code().unwrap().to_string(), "concord::data::open");
}

#[test]
fn a_line_of_delimiters_stops_at_the_field_cap() {
    // 1 MiB of commas on one line: within the byte cap, but a million and more fields.
    let mut bytes = b"id,note\n1,ok\n".to_vec();
    bytes.extend(vec![b','; (1 << 20) + 5]);
    bytes.extend(b"\n3,x\n");
    let mut source = from_bytes(&bytes, &csv()).unwrap();
    let mut record = Record::new();
    assert!(source.read_record(&mut record).unwrap());
    let error = source.read_record(&mut record).err().unwrap();
    assert!(
        matches!(
            error,
            DataError::TooManyFields {
                row: Some(2),
                line: 3,
                ..
            }
        ),
        "{error:?}"
    );
    assert!(
        error.to_string().contains("more than 1048576 fields"),
        "{error}"
    );
    // Just under the cap is a record like any other.
    let mut bytes = b"id\n".to_vec();
    bytes.extend(vec![b','; (1 << 20) - 1]);
    let mut source = from_bytes(&bytes, &csv()).unwrap();
    assert!(source.read_record(&mut record).unwrap());
    assert_eq!(record.len(), 1 << 20);
}

#[test]
fn an_unclosed_quote_stops_at_the_record_cap() {
    let mut bytes = b"id,note\n1,ok\n2,\"never closed\n".to_vec();
    bytes.extend(b"3,filler\n".repeat(100_000));
    let mut source = from_bytes(&bytes, &csv()).unwrap();
    source.set_max_record_bytes(64 * 1024);
    let mut record = Record::new();
    assert!(source.read_record(&mut record).unwrap());
    let error = source.read_record(&mut record).err().unwrap();
    assert!(
        matches!(error, DataError::RecordTooLong { row: Some(2), .. }),
        "{error:?}"
    );
    assert!(error
        .to_string()
        .contains("a record is longer than 65536 bytes"));

    // The same guard on a fixed-width file without line breaks.
    let mut source = from_bytes(&vec![b'x'; 200_000], &fixed(&[(1, 2)])).unwrap();
    source.set_max_record_bytes(1000);
    assert!(matches!(
        source.read_record(&mut record),
        Err(DataError::RecordTooLong { line: 1, .. })
    ));
}

#[test]
fn inconsistent_delimited_options_are_rejected() {
    let error = from_bytes(b"a\n", &delimited(b',', b',', true, Encoding::Utf8))
        .err()
        .unwrap();
    assert!(matches!(error, DataError::Layout { .. }));
}

#[test]
fn binary_garbage_never_panics() {
    // A small deterministic fuzz: random bytes, with plenty of quotes, delimiters and line
    // breaks, through every layout and encoding. Any outcome but a panic is acceptable.
    let mut state: u64 = 0x9e37_79b9_7f4a_7c15;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    let layouts = [
        csv(),
        delimited(b'\t', b'\'', false, Encoding::Utf8),
        fixed(&[(1, 3), (2, 9), (40, 41)]),
    ];
    for round in 0..300 {
        let len = (next() % 600) as usize;
        let bytes: Vec<u8> = (0..len)
            .map(|_| match next() % 8 {
                0 => b'"',
                1 => b',',
                2 => b'\n',
                3 => b'\r',
                _ => next() as u8,
            })
            .collect();
        let bytes = if round % 5 == 0 { gzip(&bytes) } else { bytes };
        for options in &layouts {
            for encoding in [Encoding::Utf8, Encoding::Latin1, Encoding::Windows1252] {
                let options = SourceOptions {
                    encoding,
                    ..options.clone()
                };
                if let Ok(mut source) = from_bytes(&bytes, &options) {
                    let mut record = Record::new();
                    while let Ok(true) = source.read_record(&mut record) {
                        for i in 0..=record.len() {
                            let _ = record.field(i);
                        }
                    }
                }
            }
        }
    }
}

#[test]
fn progress_counts_raw_bytes() {
    let dir = tempfile::tempdir().unwrap();
    let bytes = b"id\n"
        .iter()
        .chain(&b"1\n".repeat(50_000))
        .copied()
        .collect::<Vec<u8>>();
    let path = write_file(dir.path(), "big.csv", &bytes);
    let mut source = data::open(&path, &csv()).unwrap();
    assert_eq!(source.total_bytes(), Some(bytes.len() as u64));
    let before = source.bytes_read();
    assert!(before < bytes.len() as u64);
    assert_eq!(read_all(&mut source).len(), 50_000);
    assert_eq!(source.bytes_read(), bytes.len() as u64);
}

/// A file far larger than the reader's 64 KiB buffer, with records, quoted newlines, blank
/// lines and non-ASCII text falling across buffer boundaries, in LF and CRLF. The fields must
/// be exactly what the csv crate's own reader (a general-purpose reference, configured as a
/// plain CSV reader that allows ragged rows) yields for the same bytes, and each record's line
/// must be the line on which the generator started it.
#[test]
fn large_files_read_like_the_csv_crate_with_true_lines() {
    for newline in ["\n", "\r\n"] {
        let mut text = String::from("id,note,n");
        text.push_str(newline);
        let mut line = 2u64;
        let mut lines = Vec::new();
        for i in 0..12_000u64 {
            if i % 97 == 0 {
                text.push_str(newline);
                line += 1;
            }
            lines.push(line);
            match i % 5 {
                0 => text.push_str(&format!("{i},\"two{newline}lines, quoted\",{}", i * 3)),
                1 => text.push_str(&format!("{i},Zoë and Łukasz,{}", i % 7)),
                2 => text.push_str(&format!("{i},\"say \"\"hi\"\"\",")),
                3 => text.push_str(&format!("{i},,{},extra", i)),
                _ => text.push_str(&format!("{i},plain text with some length to it,{}", i / 2)),
            }
            line += 1 + u64::from(i % 5 == 0);
            text.push_str(newline);
        }
        let bytes = text.as_bytes();
        assert!(bytes.len() > 4 * 64 * 1024, "{} bytes", bytes.len());
        let got = read_bytes(bytes, &csv());
        let mut reference = csv::ReaderBuilder::new()
            .has_headers(true)
            .flexible(true)
            .from_reader(bytes);
        let expected: Vec<Vec<String>> = reference
            .records()
            .map(|r| r.unwrap().iter().map(str::to_string).collect())
            .collect();
        assert_eq!(got.len(), expected.len());
        for (i, (seen, fields)) in got.iter().zip(&expected).enumerate() {
            assert_eq!(&seen.fields, fields, "record {i} ({newline:?})");
            assert_eq!(seen.row, i as u64 + 1);
            assert_eq!(seen.line, lines[i], "line of record {i} ({newline:?})");
            assert!(!seen.invalid_utf8);
        }
    }
}

/// Differential fuzzing of the delimited reader: thousands of random byte strings made of the
/// characters that matter to CSV (delimiters, quotes, CR, LF, spaces, multi-byte UTF-8 and
/// bytes that are never UTF-8) are read by concord and by the csv crate's own reader (the
/// general-purpose reference, no header, ragged rows allowed). Every record must have the
/// same fields, as text where the record is UTF-8 and as the same lossy text where it is not,
/// start on the same line, and nothing may panic. Odd cases draw mostly plain text, so that
/// runs of lines with no quote or CR (which concord splits without the parser) meet quoted
/// and CRLF lines on both sides.
#[test]
fn random_bytes_read_like_the_csv_crate() {
    const ALPHABET: &[&[u8]] = &[
        b"a",
        b"b",
        b"1",
        b",",
        b",",
        b"\"",
        b"\"",
        b"\r",
        b"\n",
        b"\n",
        b" ",
        "é".as_bytes(),
        "€".as_bytes(),
        b"\xff",
        b"\xc3",
        b"\xa9",
    ];
    const PLAIN: &[&[u8]] = &[
        b"a",
        b"b",
        b"1",
        b"22",
        b",",
        b",",
        b",",
        b" ",
        b"\n",
        "é".as_bytes(),
        b"\n",
    ];
    let mut state: u64 = 0x853c_49e6_748f_ea9b;
    let mut next = move || {
        // PCG-style LCG step (Knuth's MMIX constants).
        state = state
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        state >> 33
    };
    let options = delimited(b',', b'"', false, Encoding::Utf8);
    for case in 0..3000 {
        let len = (next() % 200) as usize;
        let mut bytes = Vec::new();
        for _ in 0..len {
            let alphabet = if case % 2 == 1 && next() % 16 != 0 {
                PLAIN
            } else {
                ALPHABET
            };
            bytes.extend_from_slice(alphabet[(next() % alphabet.len() as u64) as usize]);
        }
        let got = match from_bytes(&bytes, &options) {
            Ok(mut source) => read_all(&mut source),
            // Only an input with no bytes at all is refused before reading.
            Err(e) => {
                assert!(bytes.is_empty(), "case {case}: {e} for {bytes:?}");
                continue;
            }
        };
        let mut reference = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .from_reader(&bytes[..]);
        let expected: Vec<(Vec<String>, bool, u64)> = reference
            .byte_records()
            .map(|r| {
                let r = r.unwrap();
                let utf8 = r.iter().all(|f| std::str::from_utf8(f).is_ok());
                let fields = r
                    .iter()
                    .map(|f| String::from_utf8_lossy(f).into_owned())
                    .collect();
                // The csv crate places a record where its read began, before the empty
                // lines it skipped; concord gives the line of the record's first byte.
                let at = r.position().unwrap();
                let skipped = bytes[at.byte() as usize..]
                    .iter()
                    .take_while(|&&b| b == b'\n' || b == b'\r')
                    .filter(|&&b| b == b'\n')
                    .count();
                (fields, !utf8, at.line() + skipped as u64)
            })
            .collect();
        assert_eq!(got.len(), expected.len(), "case {case}: {bytes:?}");
        for (i, (seen, (fields, invalid, line))) in got.iter().zip(&expected).enumerate() {
            assert_eq!(&seen.fields, fields, "case {case}, record {i}: {bytes:?}");
            assert_eq!(
                seen.invalid_utf8, *invalid,
                "case {case}, record {i}: {bytes:?}"
            );
            assert_eq!(seen.row, i as u64 + 1);
            assert_eq!(
                seen.line, *line,
                "line of case {case}, record {i}: {bytes:?}"
            );
        }
    }
}
