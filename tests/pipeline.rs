//! A large file is checked by a reader thread and two checking threads; a small one on one
//! thread. Both must give the same report: the same counts, the same findings and the same
//! first examples by row. The demo's wave 2 (whose planted findings an independent
//! verifier listed, see tests/check_demo.rs) is checked both ways, as written and repeated
//! many times over so that its rows are spread over many batches and both checkers.

use std::path::{Path, PathBuf};

use concord::check::{self, run::Threads};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
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
}
