//! Every command over a matrix of bad inputs, through the built binary.
//!
//! The contract under test (README "Exit codes", DESIGN sections 9 and 12): a run exits 0, 1
//! or 2 and never panics; a run that could not complete exits 2 and its message names the
//! file at fault; no partial output (or `.concord-*` temporary file) is ever left behind;
//! inputs are never modified, and an output path that names an input is refused.
//!
//! Inputs are missing files, folders, empty files, deterministic binary garbage, truncated
//! copies of the demo codebook, data, recode file and a DDI fixture (sampled offsets, not
//! every byte, to keep the run short), a 1 MB field, a header-only file, mixed line ends,
//! UTF-16, unknown variable names and bad `-o` targets. Each test collects every broken
//! expectation before failing, so one run shows the whole picture.

use std::collections::BTreeMap;
use std::ffi::OsString;
use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn demo(name: &str) -> PathBuf {
    root().join("demo-data").join(name)
}

/// A small deterministic generator (xorshift64*), so garbage inputs are the same every run.
struct Prng(u64);

impl Prng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }

    fn bytes(&mut self, n: usize) -> Vec<u8> {
        (0..n).map(|_| (self.next() >> 56) as u8).collect()
    }
}

/// Offsets to cut a file of `len` bytes at: every `step` bytes, with a small deterministic
/// jitter so cuts fall at different places inside tokens, plus the last byte.
fn offsets(len: usize, step: usize, seed: u64) -> Vec<usize> {
    let mut prng = Prng(seed);
    let mut out: Vec<usize> = (0..len)
        .step_by(step)
        .map(|o| (o + (prng.next() % 7) as usize).min(len - 1))
        .collect();
    out.push(len - 1);
    out.dedup();
    out
}

/// What a probe expects of one run.
struct Probe<'a> {
    /// Shown in failures.
    label: String,
    args: Vec<OsString>,
    /// Exit codes that are acceptable for this input.
    codes: &'a [i32],
    /// On exit 2, stderr must name one of these (file names, or a variable name).
    names: Vec<String>,
    /// The folder outputs go to: on exit 2 it must be left as it was, and it must never
    /// hold a `.concord-*` temporary file afterwards.
    out_dir: &'a Path,
    /// Files that must be byte-for-byte the same after the run.
    inputs: Vec<PathBuf>,
    /// Bytes for standard input (none: stdin is empty).
    stdin: Option<Vec<u8>>,
}

fn listing(dir: &Path) -> BTreeMap<String, u64> {
    fs::read_dir(dir)
        .map(|entries| {
            entries
                .filter_map(Result::ok)
                .map(|e| {
                    let len = e.metadata().map(|m| m.len()).unwrap_or(0);
                    (e.file_name().to_string_lossy().into_owned(), len)
                })
                .collect()
        })
        .unwrap_or_default()
}

/// Run one probe, pushing every broken expectation onto `failures`; returns the exit code.
fn probe(p: Probe<'_>, failures: &mut Vec<String>) -> Option<i32> {
    let before_inputs: Vec<Option<Vec<u8>>> = p.inputs.iter().map(|i| fs::read(i).ok()).collect();
    let before_out = listing(p.out_dir);
    let mut child = Command::new(env!("CARGO_BIN_EXE_concord"))
        .current_dir(root())
        .env("NO_COLOR", "1")
        .env_remove("CI")
        .env_remove("RUST_BACKTRACE")
        .args(&p.args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("run concord");
    {
        let mut stdin = child.stdin.take().unwrap();
        if let Some(bytes) = &p.stdin {
            // The command may stop reading early; a broken pipe here is fine.
            let _ = stdin.write_all(bytes);
        }
    }
    let output = child.wait_with_output().expect("wait for concord");
    let stderr = String::from_utf8_lossy(&output.stderr).into_owned();
    let stdout = String::from_utf8_lossy(&output.stdout);
    let code = output.status.code();
    let shown = p
        .args
        .iter()
        .map(|a| a.to_string_lossy().into_owned())
        .collect::<Vec<_>>()
        .join(" ");
    let mut fail = |what: String| {
        let tail: String = stderr.chars().take(600).collect();
        failures.push(format!(
            "[{}] concord {shown}\n  {what}\n  stderr: {}",
            p.label,
            tail.trim_end().replace('\n', "\n          ")
        ));
    };
    match code {
        Some(c) if p.codes.contains(&c) => {}
        other => fail(format!(
            "exit code {other:?}, expected one of {:?}",
            p.codes
        )),
    }
    for stream in [stderr.as_str(), &stdout] {
        if stream.contains("panicked") || stream.contains("RUST_BACKTRACE") {
            fail("the run panicked".into());
        }
    }
    if code == Some(2) && !p.names.iter().any(|n| stderr.contains(n.as_str())) {
        fail(format!("stderr names none of {:?}", p.names));
    }
    if code == Some(2) && stderr.trim().is_empty() {
        fail("exit 2 with nothing on stderr".into());
    }
    if stderr.contains(".concord-") {
        fail("the message names a temporary file, not the output".into());
    }
    let empty_message = |line: &str| {
        line.trim_end()
            .strip_suffix(':')
            .and_then(|l| l.rsplit_once(", column "))
            .is_some_and(|(_, n)| n.chars().all(|c| c.is_ascii_digit()))
    };
    if stderr.lines().any(empty_message) {
        fail("a message gives a position but says nothing about it".into());
    }
    let after_out = listing(p.out_dir);
    for name in after_out.keys() {
        if name.starts_with(".concord-") {
            fail(format!("temporary file {name} left in the output folder"));
        }
    }
    if code == Some(2) && after_out != before_out {
        fail(format!(
            "the output folder changed on a failed run: {before_out:?} -> {after_out:?}"
        ));
    }
    for (input, before) in p.inputs.iter().zip(before_inputs) {
        if fs::read(input).ok() != before {
            fail(format!("input {} was modified", input.display()));
        }
    }
    code
}

fn report(failures: Vec<String>) {
    assert!(
        failures.is_empty(),
        "{} broken expectations:\n\n{}",
        failures.len(),
        failures.join("\n\n")
    );
}

fn os(args: &[&dyn AsRef<std::ffi::OsStr>]) -> Vec<OsString> {
    args.iter().map(|a| a.as_ref().to_os_string()).collect()
}

fn name_of(path: &Path) -> String {
    path.file_name().unwrap().to_string_lossy().into_owned()
}

/// A fresh, empty output folder inside `dir`.
fn out_dir(dir: &Path, name: &str) -> PathBuf {
    let out = dir.join(name);
    fs::create_dir_all(&out).unwrap();
    out
}

/// The first 20 cases of the demo's clean first wave: small enough to run hundreds of times.
fn small_data(dir: &Path) -> PathBuf {
    let text = fs::read_to_string(demo("wave1.csv")).unwrap();
    let lines: Vec<&str> = text.lines().take(21).collect();
    let path = dir.join("small.csv");
    fs::write(&path, lines.join("\n") + "\n").unwrap();
    path
}

/// Every command that reads a codebook, run on `codebook` (which may be broken). `names`
/// lists what a could-not-run message may name.
fn every_codebook_command(
    label: &str,
    codebook: &Path,
    data: &Path,
    variable: &str,
    out: &Path,
    names: &[String],
    failures: &mut Vec<String>,
) {
    let inputs = vec![codebook.to_path_buf(), data.to_path_buf()];
    let report = out.join("report.json");
    let extract = out.join("extract.csv");
    let converted = out.join("converted.xml");
    let runs: Vec<(&str, Vec<OsString>, &[i32])> = vec![
        ("lint", os(&[&"lint", &codebook]), &[0, 1, 2]),
        (
            "check",
            os(&[&"check", &codebook, &data, &"-o", &report]),
            &[0, 1, 2],
        ),
        (
            "extract",
            os(&[&"extract", &codebook, &data, &"-o", &extract]),
            &[0, 2],
        ),
        (
            "tally",
            os(&[&"tally", &codebook, &data, &variable]),
            &[0, 2],
        ),
        (
            "convert",
            os(&[&"convert", &codebook, &"-o", &converted]),
            &[0, 2],
        ),
        (
            "recode",
            os(&[&"recode", &codebook, &demo("recodes.toml")]),
            &[0, 1, 2],
        ),
    ];
    for (command, args, codes) in runs {
        let mut names = names.to_vec();
        if command == "tally" {
            // A cut codebook may simply not have the variable yet.
            names.push(format!("`{variable}`"));
        }
        if command == "recode" {
            // ... nor the recodes' source variables.
            names.push("recodes.toml".into());
        }
        probe(
            Probe {
                label: format!("{label} / {command}"),
                args,
                codes,
                names,
                out_dir: out,
                inputs: inputs.clone(),
                stdin: None,
            },
            failures,
        );
        for f in fs::read_dir(out).unwrap().flatten() {
            let _ = fs::remove_file(f.path());
        }
    }
}

#[test]
fn missing_directory_empty_and_garbage_codebooks() {
    let dir = tempfile::tempdir().unwrap();
    let data = small_data(dir.path());
    let out = out_dir(dir.path(), "out");
    let mut failures = Vec::new();

    let missing = dir.path().join("no-such-codebook.toml");
    let folder = dir.path().join("a-folder.toml");
    fs::create_dir(&folder).unwrap();
    let empty = dir.path().join("empty-codebook.toml");
    fs::write(&empty, "").unwrap();
    let garbage = dir.path().join("garbage-codebook.toml");
    fs::write(&garbage, Prng(0x5eed).bytes(4096)).unwrap();
    let garbage_xml = dir.path().join("garbage-codebook.xml");
    let mut xml = b"<?xml version=\"1.0\"?>\n<codeBook>".to_vec();
    xml.extend(Prng(0xfeed).bytes(2048));
    fs::write(&garbage_xml, xml).unwrap();
    let nul = dir.path().join("nul-codebook.toml");
    fs::write(&nul, b"[dataset]\nname = \"x\0y\"\n\0\0\0").unwrap();
    let utf16 = dir.path().join("utf16-codebook.toml");
    fs::write(
        &utf16,
        utf16le(&fs::read_to_string(demo("codebook.toml")).unwrap()),
    )
    .unwrap();
    let header_only = dir.path().join("only-dataset.toml");
    fs::write(&header_only, "[dataset]\nname = \"x\"\n").unwrap();
    let huge = dir.path().join("huge-label.toml");
    let text = fs::read_to_string(demo("codebook.toml")).unwrap();
    fs::write(
        &huge,
        text.replacen(
            "label = \"",
            &format!("label = \"{}", "x".repeat(1 << 20)),
            1,
        ),
    )
    .unwrap();

    for (label, codebook) in [
        ("missing codebook", &missing),
        ("folder as codebook", &folder),
        ("empty codebook", &empty),
        ("garbage codebook", &garbage),
        ("garbage DDI codebook", &garbage_xml),
        ("NUL bytes in codebook", &nul),
        ("UTF-16 codebook", &utf16),
        ("codebook without variables", &header_only),
        ("codebook with a 1 MB label", &huge),
    ] {
        every_codebook_command(
            label,
            codebook,
            &data,
            "fuel",
            &out,
            &[name_of(codebook)],
            &mut failures,
        );
    }
    report(failures);
}

fn utf16le(text: &str) -> Vec<u8> {
    let mut bytes = vec![0xFF, 0xFE];
    for unit in text.encode_utf16() {
        bytes.extend(unit.to_le_bytes());
    }
    bytes
}

#[test]
fn truncated_native_codebooks() {
    let dir = tempfile::tempdir().unwrap();
    let data = small_data(dir.path());
    let out = out_dir(dir.path(), "out");
    let full = fs::read(demo("codebook.toml")).unwrap();
    let mut failures = Vec::new();
    for at in offsets(full.len(), 50, 1) {
        let cut = dir.path().join(format!("codebook-cut-{at}.toml"));
        fs::write(&cut, &full[..at]).unwrap();
        every_codebook_command(
            &format!("codebook cut at byte {at}"),
            &cut,
            &data,
            "fuel",
            &out,
            &[name_of(&cut)],
            &mut failures,
        );
        fs::remove_file(&cut).unwrap();
    }
    report(failures);
}

#[test]
fn truncated_ddi_codebooks() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("orchard.csv");
    fs::write(
        &data,
        "vol_id,role,hours,enjoy,wt\nV1,1,10,2,1.0\nV2,3,999,-9,0.5\n",
    )
    .unwrap();
    let out = out_dir(dir.path(), "out");
    let full = fs::read(root().join("tests/fixtures/ddi/orchard-2-5-prefixed.xml")).unwrap();
    let mut failures = Vec::new();
    for at in offsets(full.len(), 50, 2) {
        let cut = dir.path().join(format!("ddi-cut-{at}.xml"));
        fs::write(&cut, &full[..at]).unwrap();
        every_codebook_command(
            &format!("DDI cut at byte {at}"),
            &cut,
            &data,
            "role",
            &out,
            &[name_of(&cut)],
            &mut failures,
        );
        fs::remove_file(&cut).unwrap();
    }
    report(failures);
}

/// Every command that reads a data file, run on `data` (which may be broken).
fn every_data_command(
    label: &str,
    data: &Path,
    codes: &[i32],
    out: &Path,
    stdin: Option<Vec<u8>>,
    failures: &mut Vec<String>,
) {
    let codebook = demo("codebook.toml");
    let recodes = demo("recodes.toml");
    let inputs = if data == Path::new("-") {
        vec![codebook.clone(), recodes.clone()]
    } else {
        vec![codebook.clone(), recodes.clone(), data.to_path_buf()]
    };
    let runs: Vec<(&str, Vec<OsString>)> = vec![
        (
            "check",
            os(&[
                &"check",
                &codebook,
                &data,
                &"--format",
                &"json",
                &"-o",
                &out.join("report.json"),
            ]),
        ),
        (
            "extract",
            os(&[
                &"extract",
                &codebook,
                &data,
                &"-o",
                &out.join("extract.csv"),
            ]),
        ),
        (
            "tally",
            os(&[
                &"tally",
                &codebook,
                &data,
                &"fuel",
                &"--by",
                &"district",
                &"-o",
                &out.join("tally.txt"),
            ]),
        ),
        (
            "recode",
            os(&[
                &"recode",
                &codebook,
                &recodes,
                &data,
                &"-o",
                &out.join("recoded.csv"),
                &"--audit",
                &out.join("audit.txt"),
            ]),
        ),
    ];
    let names = if data == Path::new("-") {
        vec!["<stdin>".to_string(), "standard input".to_string()]
    } else {
        vec![name_of(data)]
    };
    for (command, args) in runs {
        // extract and tally have no gate: a readable file is a success.
        let codes: Vec<i32> = match command {
            "extract" | "tally" => codes.iter().copied().filter(|&c| c != 1).collect(),
            _ => codes.to_vec(),
        };
        let codes = if codes.is_empty() { vec![0] } else { codes };
        probe(
            Probe {
                label: format!("{label} / {command}"),
                args,
                codes: &codes,
                names: names.clone(),
                out_dir: out,
                inputs: inputs.clone(),
                stdin: stdin.clone(),
            },
            failures,
        );
        for f in fs::read_dir(out).unwrap().flatten() {
            let _ = fs::remove_file(f.path());
        }
    }
}

#[test]
fn missing_directory_empty_and_garbage_data() {
    let dir = tempfile::tempdir().unwrap();
    let out = out_dir(dir.path(), "out");
    let mut failures = Vec::new();
    let wave1 = fs::read_to_string(demo("wave1.csv")).unwrap();
    let header = wave1.lines().next().unwrap().to_string();

    let missing = dir.path().join("no-such-data.csv");
    let folder = dir.path().join("a-folder.csv");
    fs::create_dir(&folder).unwrap();
    let empty = dir.path().join("empty-data.csv");
    fs::write(&empty, "").unwrap();
    let garbage = dir.path().join("garbage-data.csv");
    fs::write(&garbage, Prng(0xdead).bytes(64 * 1024)).unwrap();
    let gz_garbage = dir.path().join("gz-garbage.csv");
    let mut bytes = vec![0x1f, 0x8b, 0x08, 0x00];
    bytes.extend(Prng(0xbeef).bytes(4096));
    fs::write(&gz_garbage, bytes).unwrap();
    let header_only = dir.path().join("header-only.csv");
    fs::write(&header_only, format!("{header}\n")).unwrap();
    let header_no_newline = dir.path().join("header-no-newline.csv");
    fs::write(&header_no_newline, &header).unwrap();
    let utf16 = dir.path().join("utf16-data.csv");
    fs::write(&utf16, utf16le(&wave1)).unwrap();
    let other_columns = dir.path().join("other-columns.csv");
    fs::write(&other_columns, "a,b\n1,2\n").unwrap();
    let blank_lines = dir.path().join("blank-lines.csv");
    fs::write(&blank_lines, "\n\n\n").unwrap();

    // Files concord cannot read at all: exit 2.
    for (label, data) in [
        ("missing data", &missing),
        ("folder as data", &folder),
        ("empty data", &empty),
        ("gzip magic then garbage", &gz_garbage),
        ("UTF-16 data", &utf16),
        ("only blank lines", &blank_lines),
    ] {
        every_data_command(label, data, &[2], &out, None, &mut failures);
    }
    // Readable, if wrong: findings (exit 1) are fine, and so is exit 2 for garbage (which
    // has none of the columns extract, tally and recode need).
    for (label, data, codes) in [
        ("garbage data", &garbage, &[1, 2][..]),
        ("none of the codebook's columns", &other_columns, &[1, 2]),
        ("header only", &header_only, &[0, 1]),
        ("header without newline", &header_no_newline, &[0, 1]),
    ] {
        every_data_command(label, data, codes, &out, None, &mut failures);
    }
    // Standard input: empty, and garbage.
    let stdin = Path::new("-");
    every_data_command("empty stdin", stdin, &[2], &out, None, &mut failures);
    every_data_command(
        "garbage stdin",
        stdin,
        &[1, 2],
        &out,
        Some(Prng(7).bytes(8192)),
        &mut failures,
    );
    report(failures);
}

#[test]
fn truncated_data_plain_and_gzip() {
    let dir = tempfile::tempdir().unwrap();
    let out = out_dir(dir.path(), "out");
    let mut failures = Vec::new();
    let full = fs::read(demo("wave2.csv")).unwrap();
    // Cut every ~1.2 kB: about 30 cuts, each run through four commands.
    for at in offsets(full.len(), 1200, 3) {
        let cut = dir.path().join(format!("wave2-cut-{at}.csv"));
        fs::write(&cut, &full[..at]).unwrap();
        let codes: &[i32] = if at == 0 { &[2] } else { &[0, 1, 2] };
        every_data_command(
            &format!("wave2 cut at byte {at}"),
            &cut,
            codes,
            &out,
            None,
            &mut failures,
        );
        fs::remove_file(&cut).unwrap();
    }
    // A gzip stream cut short is a data file that cannot be read to the end: exit 2.
    let mut gz = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::default());
    gz.write_all(&full).unwrap();
    let gz = gz.finish().unwrap();
    for at in offsets(gz.len(), gz.len() / 6, 4) {
        let cut = dir.path().join(format!("wave2-gz-cut-{at}.csv.gz"));
        fs::write(&cut, &gz[..at]).unwrap();
        every_data_command(
            &format!("gzip cut at byte {at}"),
            &cut,
            &[2],
            &out,
            None,
            &mut failures,
        );
        fs::remove_file(&cut).unwrap();
    }
    report(failures);
}

#[test]
fn huge_fields_and_mixed_line_ends() {
    let dir = tempfile::tempdir().unwrap();
    let out = out_dir(dir.path(), "out");
    let mut failures = Vec::new();
    let text = fs::read_to_string(demo("wave1.csv")).unwrap();
    let lines: Vec<&str> = text.lines().collect();

    // A 1 MB free-text note (the last column), and a 1 MB value in a coded column.
    let mut note = lines[..30].to_vec();
    let long_note = format!("{}{}", note[5], "x".repeat(1 << 20));
    note[5] = &long_note;
    let huge_note = dir.path().join("huge-note.csv");
    fs::write(&huge_note, note.join("\n") + "\n").unwrap();
    let mut coded = lines[..30].to_vec();
    let mut fields: Vec<String> = coded[7].split(',').map(str::to_string).collect();
    fields[1] = "7".repeat(1 << 20);
    let long_code = fields.join(",");
    coded[7] = &long_code;
    let huge_code = dir.path().join("huge-code.csv");
    fs::write(&huge_code, coded.join("\n") + "\n").unwrap();
    let huge_quoted = dir.path().join("huge-unterminated-quote.csv");
    fs::write(
        &huge_quoted,
        format!("{}\n\"{}", lines[0], "y".repeat(1 << 20)),
    )
    .unwrap();
    for (label, data) in [
        ("1 MB note", &huge_note),
        ("1 MB coded value", &huge_code),
        ("1 MB unterminated quote", &huge_quoted),
    ] {
        every_data_command(label, data, &[0, 1, 2], &out, None, &mut failures);
    }

    // Mixed line ends read exactly like plain LF: same report, same exit code.
    let lf = dir.path().join("lf.csv");
    fs::write(&lf, lines[..40].join("\n") + "\n").unwrap();
    let mixed = dir.path().join("mixed.csv");
    let mut body = String::new();
    for (i, line) in lines[..40].iter().enumerate() {
        body.push_str(line);
        body.push_str(if i % 2 == 0 { "\r\n" } else { "\n" });
    }
    fs::write(&mixed, body).unwrap();
    let crlf = dir.path().join("crlf.csv");
    fs::write(&crlf, lines[..40].join("\r\n")).unwrap();
    let reports: Vec<String> = [&lf, &mixed, &crlf]
        .iter()
        .map(|data| {
            let o = out_dir(dir.path(), "eol");
            let report = o.join("report.json");
            probe(
                Probe {
                    label: format!("line ends {}", name_of(data)),
                    args: os(&[
                        &"check",
                        &demo("codebook.toml"),
                        data,
                        &"--format",
                        &"json",
                        &"-o",
                        &report,
                    ]),
                    codes: &[1],
                    names: vec![name_of(data)],
                    out_dir: &o,
                    inputs: vec![data.to_path_buf()],
                    stdin: None,
                },
                &mut failures,
            );
            let json = fs::read_to_string(&report).unwrap_or_default();
            fs::remove_file(&report).ok();
            json.replace(&data.display().to_string(), "DATA")
        })
        .collect();
    if reports[0] != reports[1] || reports[0] != reports[2] {
        failures.push("CRLF or mixed line ends give a different report than LF".into());
    }
    // A codebook with CRLF line ends lints like the original.
    let cb = dir.path().join("crlf-codebook.toml");
    fs::write(
        &cb,
        fs::read_to_string(demo("codebook.toml"))
            .unwrap()
            .replace('\n', "\r\n"),
    )
    .unwrap();
    probe(
        Probe {
            label: "CRLF codebook".into(),
            args: os(&[&"check", &cb, &lf]),
            codes: &[1],
            names: vec![name_of(&cb)],
            out_dir: &out,
            inputs: vec![cb.clone()],
            stdin: None,
        },
        &mut failures,
    );
    report(failures);
}

#[test]
fn truncated_and_broken_recode_files() {
    let dir = tempfile::tempdir().unwrap();
    let data = small_data(dir.path());
    let out = out_dir(dir.path(), "out");
    let codebook = demo("codebook.toml");
    let mut failures = Vec::new();
    let mut files: Vec<(String, PathBuf)> = Vec::new();
    let full = fs::read(demo("recodes.toml")).unwrap();
    for at in offsets(full.len(), 50, 5) {
        let cut = dir.path().join(format!("recodes-cut-{at}.toml"));
        fs::write(&cut, &full[..at]).unwrap();
        files.push((format!("recodes cut at byte {at}"), cut));
    }
    let fixture = fs::read(root().join("tests/fixtures/recodes/clean.toml")).unwrap();
    for at in offsets(fixture.len(), 120, 6) {
        let cut = dir.path().join(format!("clean-cut-{at}.toml"));
        fs::write(&cut, &fixture[..at]).unwrap();
        files.push((format!("fixture clean.toml cut at byte {at}"), cut));
    }
    let garbage = dir.path().join("garbage-recodes.toml");
    fs::write(&garbage, Prng(99).bytes(2048)).unwrap();
    files.push(("garbage recodes".into(), garbage));
    let folder = dir.path().join("folder-recodes.toml");
    fs::create_dir(&folder).unwrap();
    files.push(("folder as recodes".into(), folder));
    files.push((
        "missing recodes".into(),
        dir.path().join("no-such-recodes.toml"),
    ));
    let utf16 = dir.path().join("utf16-recodes.toml");
    fs::write(&utf16, utf16le(&String::from_utf8(full.clone()).unwrap())).unwrap();
    files.push(("UTF-16 recodes".into(), utf16));

    for (label, recodes) in &files {
        // The fixture's recodes are written for the fixture codebook.
        let cb = if name_of(recodes).starts_with("clean-cut") {
            root().join("tests/fixtures/recodes/codebook.toml")
        } else {
            codebook.clone()
        };
        let names = vec![name_of(recodes)];
        probe(
            Probe {
                label: format!("{label} / validate"),
                args: os(&[&"recode", &cb, recodes, &"--format", &"json"]),
                codes: &[0, 1, 2],
                names: names.clone(),
                out_dir: &out,
                inputs: vec![cb.clone(), recodes.clone()],
                stdin: None,
            },
            &mut failures,
        );
        if cb == codebook {
            probe(
                Probe {
                    label: format!("{label} / apply"),
                    args: os(&[
                        &"recode",
                        &cb,
                        recodes,
                        &data,
                        &"-o",
                        &out.join("recoded.csv"),
                    ]),
                    codes: &[0, 1, 2],
                    names,
                    out_dir: &out,
                    inputs: vec![cb.clone(), recodes.clone(), data.clone()],
                    stdin: None,
                },
                &mut failures,
            );
            for f in fs::read_dir(&out).unwrap().flatten() {
                let _ = fs::remove_file(f.path());
            }
        }
    }
    report(failures);
}

#[test]
fn unknown_variable_names() {
    let dir = tempfile::tempdir().unwrap();
    let data = small_data(dir.path());
    let out = out_dir(dir.path(), "out");
    let codebook = demo("codebook.toml");
    let mut failures = Vec::new();
    let extract = out.join("extract.csv");
    let cases: Vec<(&str, Vec<OsString>, &str)> = vec![
        (
            "tally unknown variable",
            os(&[&"tally", &codebook, &data, &"feul"]),
            "feul",
        ),
        (
            "tally unknown --by",
            os(&[&"tally", &codebook, &data, &"fuel", &"--by", &"distrct"]),
            "distrct",
        ),
        (
            "tally unknown --weight",
            os(&[&"tally", &codebook, &data, &"fuel", &"--weight", &"wieght"]),
            "wieght",
        ),
        (
            "tally empty variable name",
            os(&[&"tally", &codebook, &data, &""]),
            "<VARIABLE>",
        ),
        (
            "tally unknown --event",
            os(&[
                &"tally",
                &codebook,
                &data,
                &"wheeze",
                &"--by",
                &"district",
                &"--event",
                &"42",
            ]),
            "42",
        ),
        (
            "extract unknown --keep",
            os(&[
                &"extract",
                &codebook,
                &data,
                &"-o",
                &extract,
                &"--keep",
                &"fuel,heat_hourz",
            ]),
            "heat_hourz",
        ),
        (
            "extract unknown --drop",
            os(&[
                &"extract", &codebook, &data, &"-o", &extract, &"--drop", &"nope",
            ]),
            "nope",
        ),
        (
            "extract empty --keep",
            os(&[
                &"extract", &codebook, &data, &"-o", &extract, &"--keep", &"",
            ]),
            "--keep",
        ),
        (
            "extract --where with unknown name",
            os(&[
                &"extract",
                &codebook,
                &data,
                &"-o",
                &extract,
                &"--where",
                &"distirct == 2",
            ]),
            "distirct",
        ),
        (
            "extract --where that does not parse",
            os(&[
                &"extract",
                &codebook,
                &data,
                &"-o",
                &extract,
                &"--where",
                &"district ==",
            ]),
            "--where",
        ),
        (
            "rules unknown id",
            os(&[&"rules", &"value.out-of-rnage"]),
            "value.out-of-rnage",
        ),
    ];
    for (label, args, name) in cases {
        probe(
            Probe {
                label: label.into(),
                args,
                codes: &[2],
                names: vec![name.into()],
                out_dir: &out,
                inputs: vec![codebook.clone(), data.clone()],
                stdin: None,
            },
            &mut failures,
        );
    }
    report(failures);
}

#[test]
fn outputs_into_missing_folders_and_over_inputs() {
    let dir = tempfile::tempdir().unwrap();
    let data = small_data(dir.path());
    let out = out_dir(dir.path(), "out");
    let codebook = dir.path().join("codebook.toml");
    fs::copy(demo("codebook.toml"), &codebook).unwrap();
    let recodes = dir.path().join("recodes.toml");
    fs::copy(demo("recodes.toml"), &recodes).unwrap();
    let ddi = dir.path().join("orchard.xml");
    fs::copy(
        root().join("tests/fixtures/ddi/orchard-2-5-prefixed.xml"),
        &ddi,
    )
    .unwrap();
    let nowhere = dir.path().join("no-such-folder").join("out.csv");
    let nowhere_toml = dir.path().join("no-such-folder").join("out.toml");
    let mut failures = Vec::new();
    let inputs = vec![codebook.clone(), recodes.clone(), data.clone(), ddi.clone()];
    // The same input, spelled another way.
    let dotted = dir.path().join(".").join("small.csv");
    let cases: Vec<(&str, Vec<OsString>, &str)> = vec![
        (
            "lint -o missing folder",
            os(&[&"lint", &codebook, &"-o", &nowhere]),
            "out.csv",
        ),
        (
            "lint -o codebook",
            os(&[&"lint", &codebook, &"-o", &codebook]),
            "codebook.toml",
        ),
        (
            "check -o missing folder",
            os(&[&"check", &codebook, &data, &"-o", &nowhere]),
            "out.csv",
        ),
        (
            "check -o data",
            os(&[&"check", &codebook, &data, &"-o", &data]),
            "small.csv",
        ),
        (
            "check -o codebook",
            os(&[&"check", &codebook, &data, &"-o", &codebook]),
            "codebook.toml",
        ),
        (
            "check -o data spelled with ./",
            os(&[&"check", &codebook, &data, &"-o", &dotted]),
            "small.csv",
        ),
        (
            "extract -o missing folder",
            os(&[&"extract", &codebook, &data, &"-o", &nowhere]),
            "out.csv",
        ),
        (
            "extract -o data",
            os(&[&"extract", &codebook, &data, &"-o", &data]),
            "small.csv",
        ),
        (
            "extract --codebook-out codebook",
            os(&[
                &"extract",
                &codebook,
                &data,
                &"-o",
                &out.join("x.csv"),
                &"--codebook-out",
                &codebook,
            ]),
            "codebook.toml",
        ),
        (
            "extract --codebook-out equal to -o",
            os(&[
                &"extract",
                &codebook,
                &data,
                &"-o",
                &out.join("x.csv"),
                &"--codebook-out",
                &out.join("x.csv"),
            ]),
            "x.csv",
        ),
        (
            "extract --codebook-out into missing folder",
            os(&[
                &"extract",
                &codebook,
                &data,
                &"-o",
                &out.join("x.csv"),
                &"--codebook-out",
                &nowhere_toml,
            ]),
            "out.toml",
        ),
        (
            "tally -o missing folder",
            os(&[&"tally", &codebook, &data, &"fuel", &"-o", &nowhere]),
            "out.csv",
        ),
        (
            "tally -o data",
            os(&[&"tally", &codebook, &data, &"fuel", &"-o", &data]),
            "small.csv",
        ),
        (
            "convert -o missing folder",
            os(&[&"convert", &codebook, &"-o", &nowhere_toml]),
            "out.toml",
        ),
        (
            "convert -o itself",
            os(&[&"convert", &codebook, &"-o", &codebook]),
            "codebook.toml",
        ),
        (
            "convert DDI -o itself",
            os(&[&"convert", &ddi, &"-o", &ddi]),
            "orchard.xml",
        ),
        (
            "convert -o without a known extension",
            os(&[&"convert", &codebook, &"-o", &out.join("x.txt")]),
            "x.txt",
        ),
        (
            "recode -o missing folder",
            os(&[&"recode", &codebook, &recodes, &data, &"-o", &nowhere]),
            "out.csv",
        ),
        (
            "recode -o data",
            os(&[&"recode", &codebook, &recodes, &data, &"-o", &data]),
            "small.csv",
        ),
        (
            "recode -o recodes",
            os(&[&"recode", &codebook, &recodes, &data, &"-o", &recodes]),
            "recodes.toml",
        ),
        (
            "recode --audit recodes",
            os(&[
                &"recode",
                &codebook,
                &recodes,
                &data,
                &"-o",
                &out.join("r.csv"),
                &"--audit",
                &recodes,
            ]),
            "recodes.toml",
        ),
        (
            "recode --codebook-out codebook",
            os(&[
                &"recode",
                &codebook,
                &recodes,
                &data,
                &"-o",
                &out.join("r.csv"),
                &"--codebook-out",
                &codebook,
            ]),
            "codebook.toml",
        ),
        (
            "recode --audit into missing folder",
            os(&[
                &"recode",
                &codebook,
                &recodes,
                &data,
                &"-o",
                &out.join("r.csv"),
                &"--audit",
                &nowhere,
            ]),
            "out.csv",
        ),
        (
            "recode --audit equal to -o",
            os(&[
                &"recode",
                &codebook,
                &recodes,
                &data,
                &"-o",
                &out.join("r.csv"),
                &"--audit",
                &out.join("r.csv"),
            ]),
            "r.csv",
        ),
        (
            "recode DATA without -o",
            os(&[&"recode", &codebook, &recodes, &data]),
            "-o",
        ),
    ];
    for (label, args, name) in cases {
        probe(
            Probe {
                label: label.into(),
                args,
                codes: &[2],
                names: vec![name.into()],
                out_dir: &out,
                inputs: inputs.clone(),
                stdin: None,
            },
            &mut failures,
        );
        if nowhere.parent().unwrap().exists() {
            failures.push(format!("[{label}] created the missing output folder"));
            let _ = fs::remove_dir_all(nowhere.parent().unwrap());
        }
    }
    report(failures);
}

/// Run concord and return (exit code, stderr), for the focused regressions below.
fn run(args: &[&dyn AsRef<std::ffi::OsStr>]) -> (Option<i32>, String) {
    let output = Command::new(env!("CARGO_BIN_EXE_concord"))
        .current_dir(root())
        .env("NO_COLOR", "1")
        .args(os(args))
        .stdin(Stdio::null())
        .output()
        .expect("run concord");
    (
        output.status.code(),
        String::from_utf8_lossy(&output.stderr).into_owned(),
    )
}

#[test]
fn regressions_found_by_this_matrix() {
    let dir = tempfile::tempdir().unwrap();
    let out = out_dir(dir.path(), "out");
    let data = small_data(dir.path());
    let codebook = demo("codebook.toml");
    let recodes = demo("recodes.toml");

    // Recodes applied to a file without their source columns used to write an output of
    // empty derived cells and exit 0.
    let other = dir.path().join("other-columns.csv");
    fs::write(&other, "a,b\n1,2\n").unwrap();
    let (code, stderr) = run(&[
        &"recode",
        &codebook,
        &recodes,
        &other,
        &"-o",
        &out.join("r.csv"),
    ]);
    assert_eq!(code, Some(2), "{stderr}");
    assert!(
        stderr.contains("other-columns.csv has no column for fuel, heat_hours,"),
        "{stderr}"
    );
    assert!(listing(&out).is_empty());

    // A failing --audit used to leave the recoded data and its codebook behind.
    let (code, stderr) = run(&[
        &"recode",
        &codebook,
        &recodes,
        &data,
        &"-o",
        &out.join("r.csv"),
        &"--audit",
        &dir.path().join("no-such-folder").join("audit.txt"),
    ]);
    assert_eq!(code, Some(2), "{stderr}");
    assert!(listing(&out).is_empty(), "{:?}", listing(&out));
    // ... and the message repeated the cause and named the temporary file.
    assert!(stderr.contains("the folder"), "{stderr}");
    assert!(stderr.contains("does not exist"), "{stderr}");
    assert!(!stderr.contains("os error"), "{stderr}");

    // UTF-16 data used to be read as garbage: every column missing, exit 1.
    let utf16 = dir.path().join("utf16.csv");
    fs::write(&utf16, utf16le(&fs::read_to_string(&data).unwrap())).unwrap();
    let (code, stderr) = run(&[&"check", &codebook, &utf16]);
    assert_eq!(code, Some(2), "{stderr}");
    assert!(stderr.contains("utf16.csv is UTF-16"), "{stderr}");
    assert!(stderr.contains("iconv -f UTF-16"), "{stderr}");
    // ... and a UTF-16 codebook was "not valid UTF-8 at byte 0", with a latin1 hint.
    let u16_codebook = dir.path().join("u16.toml");
    fs::write(
        &u16_codebook,
        utf16le(&fs::read_to_string(&codebook).unwrap()),
    )
    .unwrap();
    let (code, stderr) = run(&[&"lint", &u16_codebook]);
    assert_eq!(code, Some(2), "{stderr}");
    assert!(stderr.contains("u16.toml: the file is UTF-16"), "{stderr}");

    // A codebook cut where a value should start had an empty message.
    let cut = dir.path().join("cut.toml");
    fs::write(&cut, "[dataset]\nname = ").unwrap();
    let (code, stderr) = run(&[&"lint", &cut]);
    assert_eq!(code, Some(2), "{stderr}");
    assert!(
        stderr.contains("cut.toml: line 2, column 8: the file ends where a value should be"),
        "{stderr}"
    );
    // ... and multi-line parser messages are kept on one line.
    fs::write(&cut, "[dataset\n").unwrap();
    let (_, stderr) = run(&[&"lint", &cut]);
    assert!(
        stderr.contains("invalid table header; expected `.`, `]`"),
        "{stderr}"
    );

    // The extract and its codebook on one path: the message now names the path.
    let x = out.join("x.csv");
    let (code, stderr) = run(&[
        &"extract",
        &codebook,
        &data,
        &"-o",
        &x,
        &"--codebook-out",
        &x,
    ]);
    assert_eq!(code, Some(2), "{stderr}");
    assert!(stderr.contains("x.csv"), "{stderr}");

    // Empty variable names are refused as usage errors, not looked up.
    let (code, stderr) = run(&[&"tally", &codebook, &data, &""]);
    assert_eq!(code, Some(2), "{stderr}");
    assert!(stderr.contains("<VARIABLE>"), "{stderr}");
    let (code, stderr) = run(&[&"extract", &codebook, &data, &"-o", &x, &"--keep", &"fuel,"]);
    assert_eq!(code, Some(2), "{stderr}");
    assert!(stderr.contains("--keep"), "{stderr}");
    assert!(listing(&out).is_empty(), "{:?}", listing(&out));
}
