#!/usr/bin/env python3
"""Generate a synthetic survey for benchmarking `concord check`.

Writes into bench/out/ (git-ignored):
  codebook.toml        ~50 variables, keyed by `pid` (dataset.id = ["pid"])
  codebook-noid.toml   the same codebook without dataset.id (no uniqueness set)
  data-N.csv           N rows, mostly valid, with a sprinkling of planted problems

Deterministic: the same N gives a byte-identical file on every run. The values are invented;
the shape (coded questions with refused/don't-know codes, numeric answers with decimals and
ranges, interview and birth dates, routed follow-ups, an occasional free-text note) is that
of an ordinary household or person survey.

Python 3 standard library only. Usage: python3 bench/generate.py N [OUT_DIR]
"""

from __future__ import annotations

import random
import sys
from datetime import date, timedelta
from pathlib import Path

SEED = 20260301
BLOCK = 50_000
# Rate of planted problems per targeted cell (about 1 in 2000 cells of those columns).
PROBLEM_RATE = 0.0005

N_CAT = 20  # categorical q01..q20
N_ORD = 10  # ordinal  s01..s10


def categorical(name: str, label: str, cats: int, missing=True) -> dict:
    v = {
        "name": name,
        "label": label,
        "kind": "categorical",
        "categories": [(c, f"Option {c}") for c in range(1, cats + 1)],
    }
    if missing:
        v["missing"] = [(8, "Refused", "refused"), (9, "Don't know", "dont-know")]
    return v


def variables() -> list[dict]:
    vs: list[dict] = [
        {"name": "pid", "label": "Person identifier", "kind": "identifier",
         "pattern": "^P[0-9]{8}$"},
        {"name": "region", "label": "Region", "kind": "categorical",
         "categories": [(c, f"Region {c}") for c in range(1, 13)],
         "missing": [(99, "Not recorded", "not-ascertained")]},
        {"name": "sex", "label": "Sex", "kind": "categorical",
         "categories": [(1, "Male"), (2, "Female"), (3, "Other")],
         "missing": [(8, "Refused", "refused")]},
        {"name": "age", "label": "Age in years", "kind": "numeric",
         "range": (16, 99), "decimals": 0,
         "missing": [(998, "Refused", "refused"), (999, "Don't know", "dont-know")]},
        {"name": "int_date", "label": "Date of interview", "kind": "date",
         "range": ('"2025-01-01"', '"2025-12-31"')},
        {"name": "birth_date", "label": "Date of birth", "kind": "date",
         "range": ('"1920-01-01"', '"2009-12-31"'),
         "missing": [('"9999-99-99"', "Refused", "refused")]},
    ]
    for i in range(1, N_CAT + 1):
        vs.append(categorical(f"q{i:02d}", f"Question {i}", 2 + i % 5))
    for i in range(1, N_ORD + 1):
        vs.append({
            "name": f"s{i:02d}", "label": f"Agreement with statement {i}", "kind": "ordinal",
            "categories": [(c, f"Level {c}") for c in range(1, 8 if i % 2 else 6)],
            "missing": [(98, "Don't know", "dont-know"), (99, "Refused", "refused")],
        })
    vs += [
        {"name": "income", "label": "Net monthly income", "kind": "numeric",
         "range": (0, 100000), "decimals": 2,
         "missing": [(-8, "Refused", "refused"), (-9, "Don't know", "dont-know")]},
        {"name": "height", "label": "Height (cm)", "kind": "numeric",
         "range": (100, 230), "decimals": 1,
         "missing": [(999, "Not measured", "not-ascertained")]},
        {"name": "weight_kg", "label": "Weight (kg)", "kind": "numeric",
         "range": (25, 300), "decimals": 1,
         "missing": [(999, "Not measured", "not-ascertained")]},
        {"name": "hh_size", "label": "People in the household", "kind": "numeric",
         "range": (1, 20), "decimals": 0},
        {"name": "commute_km", "label": "Commute distance (km)", "kind": "numeric",
         "range": (0, 500), "decimals": 1, "blank": "not-ascertained"},
        {"name": "wt", "label": "Design weight", "kind": "numeric",
         "range": (0.01, 50), "decimals": 4},
        # Gates and their routed follow-ups.
        categorical("employed", "In paid work last week", 2),
        {"name": "work_hours", "label": "Hours worked last week", "kind": "numeric",
         "range": (0, 100), "decimals": 1, "universe": "employed == 1", "blank": "skipped",
         "missing": [(998, "Don't know", "dont-know")]},
        categorical("smoker", "Smokes at all nowadays", 2),
        {"name": "cigs_day", "label": "Cigarettes per day", "kind": "numeric",
         "range": (0, 80), "decimals": 0, "universe": "smoker == 1", "blank": "skipped",
         "missing": [(-1, "Skipped", "skipped"), (998, "Don't know", "dont-know")]},
        categorical("has_kids", "Has children", 2),
        {"name": "n_kids", "label": "Number of children", "kind": "numeric",
         "range": (1, 15), "decimals": 0,
         "universe": "has_kids == 1 and age >= 18", "blank": "skipped"},
        {"name": "note", "label": "Interviewer note", "kind": "text",
         "max_length": 60, "blank": "other"},
    ]
    return vs


def toml_code(c) -> str:
    return str(c)


def codebook(vs: list[dict], with_id: bool) -> str:
    out = ['# Synthetic benchmark survey for concord (generated by bench/generate.py).', '',
           '[dataset]', 'name = "bench-survey"', 'title = "Synthetic benchmark survey"']
    if with_id:
        out.append('id = ["pid"]')
    out.append('weight = "wt"')
    out += ['', '[file]', 'layout = "delimited"', 'delimiter = ","', 'header = true', '']
    for v in vs:
        out.append('[[variables]]')
        out.append(f'name = "{v["name"]}"')
        out.append(f'label = "{v["label"]}"')
        out.append(f'kind = "{v["kind"]}"')
        if "categories" in v:
            out.append('categories = [')
            out += [f'  {{ code = {c}, label = "{lab}" }},' for c, lab in v["categories"]]
            out.append(']')
        if "missing" in v:
            out.append('missing = [')
            out += [f'  {{ code = {toml_code(c)}, label = "{lab}", kind = "{k}" }},'
                    for c, lab, k in v["missing"]]
            out.append(']')
        if "range" in v:
            lo, hi = v["range"]
            out.append(f'range = {{ min = {lo}, max = {hi} }}')
        for key in ("decimals", "max_length"):
            if key in v:
                out.append(f'{key} = {v[key]}')
        for key in ("pattern", "universe", "blank"):
            if key in v:
                out.append(f'{key} = "{v[key]}"')
        out.append('')
    out += [
        '[[checks]]', 'name = "kids-fit-household"', 'assert = "n_kids < hh_size"',
        'when = "has_kids == 1"', 'severity = "warning"', '',
        '[[checks]]', 'name = "interviewed-after-birth"', 'assert = "birth_date < int_date"',
        '',
    ]
    return "\n".join(out)


def iso(d: date) -> str:
    return d.isoformat()


def pools(rng: random.Random) -> dict[str, list[str]]:
    d0 = date(2025, 1, 1)
    b0 = date(1930, 1, 1)
    notes = [
        "respondent tired", "neighbour present", "interview by phone",
        "\"Asked to call back, later\"", "partial: language", "dog barking",
        "\"said \"\"no comment\"\"\"", "translator used",
    ]
    return {
        "int_date": [iso(d0 + timedelta(days=i)) for i in range(365)],
        "birth_date": [iso(b0 + timedelta(days=i)) for i in range(0, 29000, 3)],
        "income": [f"{rng.lognormvariate(7.6, 0.6):.2f}" for _ in range(20000)],
        "height": [f"{rng.gauss(170, 10):.1f}" for _ in range(5000)],
        "weight_kg": [f"{rng.gauss(76, 14):.1f}" for _ in range(5000)],
        "commute_km": [f"{rng.expovariate(0.08):.1f}" for _ in range(5000)] + [""] * 2500,
        "wt": [f"{rng.uniform(0.2, 4.0):.4f}" for _ in range(20000)],
        "work_hours": [f"{rng.gauss(38, 9):.1f}" for _ in range(3000)],
        "note": notes,
    }


# Planted problems, by column: values that break one rule each.
PROBLEMS = {
    "region": ["13", "x", ""],                    # unlabelled, not a number, blank
    "sex": ["4", "M"],
    "age": ["150", "12", "4O", "33.5"],           # out of range, typo, too many decimals
    "int_date": ["2025-02-30", "2024-12-31", "31/01/2025"],
    "birth_date": ["1899-01-01", "2010-13-01"],
    "q03": ["7", "Y"],
    "q11": ["0"],
    "s04": ["6", "97", "3.0.1"],
    "income": ["1234.567", "-50.00", "n/a", "250000"],
    "height": ["1.72", "17.25"],
    "hh_size": ["0", "21"],
    "wt": ["0.000", "1.23456"],
}


def generate(n: int, path: Path, names: list[str]) -> None:
    col = {name: i for i, name in enumerate(names)}
    base = random.Random(SEED)
    pool = pools(base)
    codes = {}
    for v in variables():
        if v["kind"] in ("categorical", "ordinal"):
            cats = [str(c) for c, _ in v["categories"]]
            miss = [str(c) for c, _, _ in v.get("missing", [])]
            codes[v["name"]] = (cats, miss)
    with open(path, "w", newline="", encoding="utf-8") as f:
        f.write(",".join(names) + "\n")
        for start in range(0, n, BLOCK):
            k = min(BLOCK, n - start)
            rng = random.Random(SEED * 1000 + start // BLOCK)
            cols: list[list[str]] = [None] * len(names)  # type: ignore[list-item]
            cols[col["pid"]] = [f"P{start + i + 1:08d}" for i in range(k)]
            for name, (cats, miss) in codes.items():
                w = [10 - min(i, 8) for i in range(len(cats))]
                population = cats + miss
                weights = w + [0.3] * len(miss)
                cols[col[name]] = rng.choices(population, weights, k=k)
            ages = [str(min(99, max(16, int(rng.gauss(46, 17))))) for _ in range(k)]
            ages = [a if rng.random() > 0.003 else "998" for a in ages]
            cols[col["age"]] = ages
            for name in ("int_date", "birth_date", "income", "height", "weight_kg",
                         "commute_km", "wt"):
                cols[col[name]] = rng.choices(pool[name], k=k)
            cols[col["hh_size"]] = rng.choices(["1", "2", "3", "4", "5", "6", "7"],
                                               [15, 30, 20, 20, 9, 4, 2], k=k)
            # Routed follow-ups follow their gates (blank when not asked).
            emp, smk, kids = cols[col["employed"]], cols[col["smoker"]], cols[col["has_kids"]]
            hs = cols[col["hh_size"]]
            # Single-person households have no children at home (mostly: a few slip through).
            for i in range(k):
                if hs[i] == "1" and kids[i] == "1" and i % 50:
                    kids[i] = "2"
            wh = rng.choices(pool["work_hours"], k=k)
            cols[col["work_hours"]] = [wh[i] if emp[i] == "1" else "" for i in range(k)]
            cigs = rng.choices([str(c) for c in range(1, 41)], k=k)
            cols[col["cigs_day"]] = [cigs[i] if smk[i] == "1" else ("-1" if i % 7 == 0 else "")
                                     for i in range(k)]
            cols[col["n_kids"]] = [
                str(1 + i % max(1, int(hs[i]) - 1)) if kids[i] == "1" and int(ages[i]) >= 18
                else "" for i in range(k)]
            notes = pool["note"]
            cols[col["note"]] = [notes[i % len(notes)] if rng.random() < 0.02 else ""
                                 for i in range(k)]
            # Planted problems.
            for name, bad in PROBLEMS.items():
                c = cols[col[name]]
                for _ in range(max(1, int(k * PROBLEM_RATE))):
                    c[rng.randrange(k)] = rng.choice(bad)
            for _ in range(max(1, int(k * PROBLEM_RATE))):  # routing errors
                i = rng.randrange(k)
                cols[col["work_hours"]][i] = "40.0" if emp[i] != "1" else ""
            for _ in range(2):  # repeated ids
                i = rng.randrange(1, k)
                cols[col["pid"]][i] = cols[col["pid"]][i - 1]
            f.write("\n".join(",".join(row) for row in zip(*cols)))
            f.write("\n")


def main() -> None:
    n = int(sys.argv[1])
    out = Path(sys.argv[2]) if len(sys.argv) > 2 else Path(__file__).resolve().parent / "out"
    out.mkdir(parents=True, exist_ok=True)
    vs = variables()
    (out / "codebook.toml").write_text(codebook(vs, True), encoding="utf-8")
    (out / "codebook-noid.toml").write_text(codebook(vs, False), encoding="utf-8")
    generate(n, out / f"data-{n}.csv", [v["name"] for v in vs])


if __name__ == "__main__":
    main()
