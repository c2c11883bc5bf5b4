//! A large file is read by one thread and checked by every core, batches going to whichever
//! thread is free; a small one is read and checked on one thread. Both must give the same
//! report: the same counts, the same findings and the same first examples by row, and the
//! same means and standard deviations to the last bit. The demo's wave 2 (whose planted findings an independent
//! verifier listed, see tests/check_demo.rs) is checked both ways, as written and repeated
//! many times over so that its rows are spread over many batches and both checkers.

use std::path::{Path, PathBuf};

use concord::check::{self, run::Threads};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// The pass of checking `data` against `codebook` with the given threads.
fn pass(codebook: &Path, data: &Path, threads: Threads) -> check::run::Pass {
    let codebook = concord::codebook::load(codebook).unwrap().codebook;
    let mut source = concord::data::open(data, &check::source_options(&codebook)).unwrap();
    let options = check::Options {
        max_examples: 5,
        threads,
    };
    check::check(&codebook, &mut source, &options, &mut |_| {}).unwrap()
}

/// The JSON report of checking `data` against `codebook` with the given threads.
fn report(
    codebook: &Path,
    data: &Path,
    threads: Threads,
    max_examples: usize,
) -> serde_json::Value {
    let loaded = concord::codebook::load(codebook).unwrap();
    let codebook = loaded.codebook;
    let mut source = concord::data::open(data, &check::source_options(&codebook)).unwrap();
    let options = check::Options {
        max_examples,
        threads,
    };
    let pass = check::check(&codebook, &mut source, &options, &mut |_| {}).unwrap();
    let report = check::report::build(&codebook, pass, "codebook", "data", |_| true);
    serde_json::to_value(&report).unwrap()
}

fn same_both_ways(codebook: &Path, data: &Path) {
    for max_examples in [0, 1, 3, 1000] {
        let one = report(codebook, data, Threads::One, max_examples);
        let pipelined = report(codebook, data, Threads::Pipelined, max_examples);
        assert_eq!(
            one,
            pipelined,
            "{} with {max_examples} examples",
            data.display()
        );
    }
}

#[test]
fn demo_wave2_is_the_same_on_one_thread_and_pipelined() {
    let demo = root().join("demo-data");
    same_both_ways(&demo.join("codebook.toml"), &demo.join("wave2.csv"));
    same_both_ways(
        &demo.join("codebook-fixed.toml"),
        &demo.join("wave1-fixed.txt"),
    );
}

#[test]
fn many_batches_give_the_same_report() {
    let demo = root().join("demo-data");
    let text = std::fs::read_to_string(demo.join("wave2.csv")).unwrap();
    let (header, body) = text.split_once('\n').unwrap();
    let mut big = format!("{header}\n");
    for _ in 0..40 {
        big.push_str(body);
    }
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("wave2x40.csv");
    std::fs::write(&data, big).unwrap();
    let codebook = demo.join("codebook.toml");
    same_both_ways(&codebook, &data);
    // Every repeat of a key is found, in file order, whichever thread checked the row.
    let report = report(&codebook, &data, Threads::Pipelined, 1000);
    let rows = report["rows"].as_u64().unwrap();
    assert!(rows > 20_000, "{rows} rows: enough for many batches");
    let repeats = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "structure.id-duplicate")
        .unwrap();
    let examples = repeats["examples"].as_array().unwrap();
    let rows: Vec<u64> = examples
        .iter()
        .map(|e| e["row"].as_u64().unwrap())
        .collect();
    assert!(
        rows.windows(2).all(|w| w[0] < w[1]),
        "examples by row: {rows:?}"
    );
    // Statistics are taken batch by batch and combined in file order on both paths, so
    // they agree exactly, not just closely; the pipelined run is repeated because which
    // thread checks which batch changes from run to run.
    let one = pass(&codebook, &data, Threads::One);
    let bits = |p: &check::run::Pass| -> Vec<(u64, Option<u64>, Option<u64>)> {
        p.tallies
            .iter()
            .map(|t| {
                let s = &t.stats;
                (
                    s.count,
                    s.mean().map(f64::to_bits),
                    s.sd().map(f64::to_bits),
                )
            })
            .collect()
    };
    assert!(one.tallies.iter().any(|t| t.stats.count > 10_000));
    for _ in 0..5 {
        assert_eq!(
            bits(&one),
            bits(&pass(&codebook, &data, Threads::Pipelined))
        );
    }
}

/// A read error part way through a large file stops a pipelined run with that error (and
/// does not hang or report a partial pass): here a gzip stream cut off in the middle.
#[test]
fn a_read_error_midway_stops_the_pipelined_run() {
    use std::io::Write;
    let demo = root().join("demo-data");
    let text = std::fs::read_to_string(demo.join("wave2.csv")).unwrap();
    let (header, body) = text.split_once('\n').unwrap();
    let mut encoder = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::fast());
    writeln!(encoder, "{header}").unwrap();
    for _ in 0..40 {
        encoder.write_all(body.as_bytes()).unwrap();
    }
    let gz = encoder.finish().unwrap();
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("cut.csv.gz");
    std::fs::write(&data, &gz[..gz.len() / 2]).unwrap();
    let codebook = concord::codebook::load(&demo.join("codebook.toml"))
        .unwrap()
        .codebook;
    for threads in [Threads::One, Threads::Pipelined] {
        let mut source = concord::data::open(&data, &check::source_options(&codebook)).unwrap();
        let options = check::Options {
            max_examples: 5,
            threads,
        };
        let result = check::check(&codebook, &mut source, &options, &mut |_| {});
        match result {
            Err(check::CheckError::Data(e)) => {
                let error = e.to_string();
                assert!(error.contains("cut.csv.gz"), "{threads:?}: {error}");
            }
            Err(other) => panic!("{threads:?}: not a data error: {other:?}"),
            Ok(pass) => panic!("{threads:?}: a cut gzip stream passed ({} rows)", pass.rows),
        }
    }
}
