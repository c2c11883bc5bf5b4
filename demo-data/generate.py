#!/usr/bin/env python3
"""Generate concord's demonstration survey: codebook, a clean wave and a wave with planted problems.

The survey is invented: the Fennick Heating and Breathing Survey, a household survey about home
heating and respiratory symptoms in the invented town of Fennick. Nothing here describes real
people or a real survey.

Outputs (all in this directory, byte-identical on every run):
  codebook.toml               native codebook, with wave 1's documented figures
  wave1.csv                   600 households, clean: passes every rule of DESIGN section 5
  wave2.csv                   640 households with planted problems at known rows
  expected-wave2.json         the findings a correct `concord check codebook.toml wave2.csv` reports
  wave1-dup-header.csv        wave 1 re-exported with the weight column joined twice
  expected-wave1-dup-header.json
  codebook-fixed.toml         the same codebook for a fixed-width file
  wave1-fixed.txt             wave 1 as fixed-width records, no header

Python 3.11 standard library only. Run: python3 demo-data/generate.py
"""

from __future__ import annotations

import csv
import io
import json
import math
import random
from datetime import date, timedelta
from pathlib import Path

HERE = Path(__file__).resolve().parent

WAVE1_SEED = 20260105
WAVE2_SEED = 20260216
WAVE1_ROWS = 600
WAVE2_ROWS = 640
MAX_EXAMPLES = 5

# ---------------------------------------------------------------------------------------------
# The codebook, as data. Order of VARIABLES is the column order of the delimited files.
# ---------------------------------------------------------------------------------------------

YES_NO = [{"code": 1, "label": "Yes"}, {"code": 2, "label": "No"}]
REFUSED_DK = [
    {"code": 8, "label": "Refused", "kind": "refused"},
    {"code": 9, "label": "Don't know", "kind": "dont-know"},
]

DISTRICTS = [
    {"code": 1, "label": "Quayside"},
    {"code": 2, "label": "Tanner's Rise"},
    {"code": 3, "label": "Millbrook"},
    {"code": 4, "label": "Larkfield"},
    {"code": 5, "label": "Upper Fenn"},
]
FUELS = [
    {"code": 1, "label": "Mains gas"},
    {"code": 2, "label": "Electricity"},
    {"code": 3, "label": "Heating oil"},
    {"code": 4, "label": "Wood or wood pellets"},
    {"code": 5, "label": "Coal or peat"},
    {"code": 6, "label": "Other fuel"},
    {"code": 7, "label": "No heating"},
]

VARIABLES = [
    {"name": "hh_id", "label": "Household identifier", "kind": "identifier",
     "pattern": "^H[0-9]{5}$", "width": 6},
    {"name": "district", "label": "District of Fennick", "kind": "categorical",
     "categories": DISTRICTS, "width": 1, "document_frequency": True},
    {"name": "dwelling", "label": "Type of dwelling", "kind": "categorical",
     "categories": [
         {"code": 1, "label": "Detached house"},
         {"code": 2, "label": "Semi-detached or terraced house"},
         {"code": 3, "label": "Flat or apartment"},
         {"code": 4, "label": "Mobile home or houseboat"},
     ],
     "missing": [{"code": 9, "label": "Not observed", "kind": "not-ascertained"}],
     "width": 1},
    {"name": "fuel", "label": "Main fuel used to heat the home", "kind": "categorical",
     "categories": FUELS,
     "missing": [{"code": 99, "label": "Not recorded", "kind": "not-ascertained"}],
     "width": 2, "document_frequency": True},
    {"name": "heat_hours", "label": "Hours the heating is on, typical winter day",
     "kind": "numeric", "range": (0, 24), "decimals": 1,
     "missing": [
         {"code": 97, "label": "Refused", "kind": "refused"},
         {"code": 98, "label": "Don't know", "kind": "dont-know"},
     ],
     "width": 4, "document_statistics": True},
    {"name": "wood_stove", "label": "A wood-burning stove is used in the home",
     "kind": "categorical", "categories": YES_NO, "missing": REFUSED_DK, "width": 1},
    {"name": "stove_age", "label": "Age of the wood-burning stove in years", "kind": "numeric",
     "range": (0, 80), "decimals": 0, "universe": "wood_stove == 1", "blank": "skipped",
     "missing": [
         {"code": 996, "label": "Not applicable: no wood stove", "kind": "skipped"},
         {"code": 998, "label": "Don't know", "kind": "dont-know"},
     ],
     "width": 3},
    {"name": "wheeze", "label": "Respondent had wheezing in the chest, last 12 months",
     "kind": "categorical", "categories": YES_NO, "missing": REFUSED_DK, "width": 1},
    {"name": "wheeze_night", "label": "Wheezing woke the respondent at night, last 12 months",
     "kind": "categorical", "categories": YES_NO, "universe": "wheeze == 1",
     "blank": "skipped", "missing": REFUSED_DK, "width": 1},
    {"name": "cough", "label": "Respondent had a cough most mornings, last 12 months",
     "kind": "categorical", "categories": YES_NO, "missing": REFUSED_DK, "width": 1},
    {"name": "hh_size", "label": "Number of people living in the household", "kind": "numeric",
     "range": (1, 12), "decimals": 0, "width": 2},
    {"name": "hh_weight", "label": "Household design weight", "kind": "numeric",
     "range": (0.2, 5), "decimals": 3, "width": 5},
    {"name": "interview_date", "label": "Date of interview", "kind": "date",
     "range": ("2026-01-05", "2026-03-31"), "width": 10},
    {"name": "int_note", "label": "Interviewer note", "kind": "text", "max_length": 60,
     "blank": "other", "width": 60},
]
VAR_BY_NAME = {v["name"]: v for v in VARIABLES}

# Fixed-width layout: fields in codebook order, one blank column between fields for legibility.
_start = 1
for _var in VARIABLES:
    _var["columns"] = (_start, _start + _var["width"] - 1)
    _start += _var["width"] + 1
del _start, _var
COLUMN_NAMES = [v["name"] for v in VARIABLES]
RECORD_LENGTH = VARIABLES[-1]["columns"][1]

CHECKS = [
    {"name": "no-heating-no-hours",
     "assert": "heat_hours == 0",
     "when": "answered(fuel) and fuel == 7",
     "severity": "error"},
    {"name": "wood-fuel-has-stove",
     "assert": "fuel != 4 or wood_stove == 1",
     "severity": "warning"},
]

# Interviewer notes: invented, ASCII only (so fixed-width byte and character columns agree).
NOTES = [
    "Tenant answered, landlord owns the stove",
    "Heating broken since December",
    "Respondent uses portable gas heater too",
    "Two households share one meter",
    "Interview partly through an interpreter",
    "Chimney swept last autumn",
    "Pellet boiler, not a stove",
    "Respondent asked for leaflet on damp",
    "Dog in house, short interview",
    "Night storage heaters, off-peak tariff",
    # exactly 60 characters: at the limit, must not be reported as too long
    "Respondent works nights; heating runs mostly in the daytime.",
]
assert len(NOTES[-1]) == 60, len(NOTES[-1])

# ---------------------------------------------------------------------------------------------
# Clean data
# ---------------------------------------------------------------------------------------------


def pick(rng: random.Random, options: list, weights: list):
    return rng.choices(options, weights=weights, k=1)[0]


def clean_row(rng: random.Random, hh_id: str, first_day: date, last_day: date) -> dict:
    """One household that honours every rule of the codebook."""
    row = {"hh_id": hh_id}
    row["district"] = str(pick(rng, [1, 2, 3, 4, 5], [22, 18, 25, 15, 20]))
    row["dwelling"] = str(pick(rng, [1, 2, 3, 4, 9], [28, 36, 30, 5, 1]))
    fuel = pick(rng, [1, 2, 3, 4, 5, 6, 7, 99], [38, 20, 10, 15, 7, 4, 3, 3])
    row["fuel"] = str(fuel)

    if fuel == 7:
        row["heat_hours"] = "0.0"
    else:
        roll = rng.random()
        if roll < 0.03:
            row["heat_hours"] = "97"
        elif roll < 0.07:
            row["heat_hours"] = "98"
        elif roll < 0.09:
            row["heat_hours"] = "24.0"
        else:
            hours = min(23.5, max(0.5, rng.gauss(9.0, 4.0)))
            row["heat_hours"] = f"{round(hours * 2) / 2:.1f}"

    # A household heating mainly with wood has a stove unless the answer is missing, so the
    # warning check wood-fuel-has-stove holds on clean data.
    if fuel == 4:
        stove = pick(rng, [1, 9], [95, 5])
    else:
        stove = pick(rng, [1, 2, 8, 9], [18, 78, 2, 2])
    row["wood_stove"] = str(stove)

    if stove == 1:
        row["stove_age"] = "998" if rng.random() < 0.05 else str(min(80, int(rng.expovariate(1 / 9))))
    elif stove == 2:
        row["stove_age"] = "996" if rng.random() < 0.2 else ""
    else:
        # Gate unknown: either a skip or an answer is accepted.
        row["stove_age"] = str(rng.randint(1, 30)) if rng.random() < 0.3 else ""

    p_wheeze = 33 if stove == 1 else 22
    wheeze = pick(rng, [1, 2, 8, 9], [p_wheeze, 96 - p_wheeze, 2, 2])
    row["wheeze"] = str(wheeze)
    if wheeze == 1:
        row["wheeze_night"] = str(pick(rng, [1, 2, 8, 9], [40, 55, 2, 3]))
    elif wheeze == 2:
        row["wheeze_night"] = ""
    else:
        row["wheeze_night"] = str(pick(rng, [1, 2], [1, 1])) if rng.random() < 0.25 else ""

    row["cough"] = str(pick(rng, [1, 2, 8, 9], [30, 66, 2, 2]))
    row["hh_size"] = str(pick(rng, [1, 2, 3, 4, 5, 6, 7, 8], [24, 32, 16, 15, 7, 3, 2, 1]))
    weight = min(5.0, max(0.2, rng.lognormvariate(0.0, 0.35)))
    row["hh_weight"] = f"{weight:.3f}"
    span = (last_day - first_day).days
    row["interview_date"] = (first_day + timedelta(days=rng.randint(0, span))).isoformat()
    row["int_note"] = rng.choice(NOTES) if rng.random() < 0.15 else ""
    return row


def make_wave(seed: int, rows: int, id_base: int, first_day: date, last_day: date) -> list[dict]:
    rng = random.Random(seed)
    return [clean_row(rng, f"H{id_base + i:05d}", first_day, last_day) for i in range(1, rows + 1)]


# ---------------------------------------------------------------------------------------------
# Figures computed from a wave, the way DESIGN section 5 counts them
# ---------------------------------------------------------------------------------------------


def category_counts(rows: list[dict], name: str) -> dict[int, int]:
    """Unweighted count of valid cells per category code (finding cells hold no category)."""
    codes = [c["code"] for c in VAR_BY_NAME[name]["categories"]]
    counts = {code: 0 for code in codes}
    for row in rows:
        cell = row.get(name, "").strip()
        try:
            value = float(cell)
        except ValueError:
            continue
        if value.is_integer() and int(value) in counts:
            counts[int(value)] += 1
    return counts


def numeric_statistics(rows: list[dict], name: str) -> dict:
    var = VAR_BY_NAME[name]
    low, high = var["range"]
    values = []
    for row in rows:
        cell = row.get(name, "").strip()
        try:
            value = float(cell)
        except ValueError:
            continue
        if low <= value <= high:
            values.append(value)
    n = len(values)
    mean = sum(values) / n
    sd = math.sqrt(sum((v - mean) ** 2 for v in values) / (n - 1))
    return {"valid": n, "mean": mean, "sd": sd, "min": min(values), "max": max(values)}


def number_text(value: float) -> str:
    return str(int(value)) if float(value).is_integer() else repr(value)


# ---------------------------------------------------------------------------------------------
# Writers
# ---------------------------------------------------------------------------------------------


def toml_string(text: str) -> str:
    return json.dumps(text, ensure_ascii=False)


def toml_code_list(entries: list[dict], extra: dict | None = None) -> list[str]:
    lines = []
    for entry in entries:
        parts = [f"code = {entry['code']}", f"label = {toml_string(entry['label'])}"]
        if "kind" in entry:
            parts.append(f"kind = {toml_string(entry['kind'])}")
        if extra and entry["code"] in extra:
            parts.append(f"frequency = {extra[entry['code']]}")
        lines.append("  { " + ", ".join(parts) + " },")
    return lines


def write_codebook(path: Path, documented: dict, fixed: bool) -> None:
    out = []
    out.append("# Fennick Heating and Breathing Survey: codebook for the household file.")
    out.append("# Invented survey for demonstrating concord; no real people or places.")
    out.append("# Written by generate.py; documented figures are wave 1's.")
    out.append("")
    out.append("[dataset]")
    out.append('name = "fennick-heating-w1"')
    out.append('title = "Fennick Heating and Breathing Survey, households"')
    out.append(f"cases = {documented['cases']}")
    out.append('id = ["hh_id"]')
    out.append('weight = "hh_weight"')
    out.append("")
    out.append("[file]")
    if fixed:
        out.append('layout = "fixed"')
        out.append("header = false")
    else:
        out.append('layout = "delimited"')
        out.append('delimiter = ","')
        out.append("header = true")
    out.append('encoding = "utf-8"')
    for var in VARIABLES:
        out.append("")
        out.append("[[variables]]")
        out.append(f"name = {toml_string(var['name'])}")
        out.append(f"label = {toml_string(var['label'])}")
        out.append(f"kind = {toml_string(var['kind'])}")
        if "categories" in var:
            freq = documented["frequencies"].get(var["name"])
            out.append("categories = [")
            out.extend(toml_code_list(var["categories"], freq))
            out.append("]")
        if "missing" in var:
            out.append("missing = [")
            out.extend(toml_code_list(var["missing"]))
            out.append("]")
        if "range" in var:
            low, high = var["range"]
            if var["kind"] == "date":
                out.append(f"range = {{ min = {toml_string(low)}, max = {toml_string(high)} }}")
            else:
                out.append(f"range = {{ min = {low}, max = {high} }}")
        if "decimals" in var:
            out.append(f"decimals = {var['decimals']}")
        if "universe" in var:
            out.append(f"universe = {toml_string(var['universe'])}")
        if "blank" in var:
            out.append(f"blank = {toml_string(var['blank'])}")
        if "pattern" in var:
            out.append(f"pattern = {toml_string(var['pattern'])}")
        if "max_length" in var:
            out.append(f"max_length = {var['max_length']}")
        if var["name"] in documented["statistics"]:
            s = documented["statistics"][var["name"]]
            out.append(
                f"documented = {{ valid = {s['valid']}, mean = {s['mean']:.2f}, "
                f"sd = {s['sd']:.2f}, min = {number_text(s['min'])}, max = {number_text(s['max'])} }}"
            )
        if fixed:
            start, end = var["columns"]
            out.append(f"columns = {{ start = {start}, end = {end} }}")
    for check in CHECKS:
        out.append("")
        out.append("[[checks]]")
        out.append(f"name = {toml_string(check['name'])}")
        out.append(f"assert = {toml_string(check['assert'])}")
        if "when" in check:
            out.append(f"when = {toml_string(check['when'])}")
        out.append(f"severity = {toml_string(check['severity'])}")
    path.write_text("\n".join(out) + "\n", encoding="utf-8")


def csv_line(fields: list[str]) -> str:
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerow(fields)
    return buffer.getvalue()


def write_csv(path: Path, header: list[str], lines: list[str]) -> None:
    with path.open("w", encoding="utf-8", newline="") as handle:
        handle.write(csv_line(header))
        handle.writelines(lines)


def write_fixed(path: Path, rows: list[dict]) -> None:
    with path.open("w", encoding="utf-8", newline="") as handle:
        for row in rows:
            record = []
            for var in VARIABLES:
                start, end = var["columns"]
                width = end - start + 1
                cell = row[var["name"]]
                assert len(cell) <= width, (var["name"], cell)
                record.append(cell.ljust(width) if var["kind"] == "text" else cell.rjust(width))
            line = " ".join(record)
            assert len(line) == RECORD_LENGTH
            handle.write(line + "\n")


def write_json(path: Path, payload: dict) -> None:
    path.write_text(json.dumps(payload, indent=2, ensure_ascii=False) + "\n", encoding="utf-8")


# ---------------------------------------------------------------------------------------------
# Planted problems in wave 2
# ---------------------------------------------------------------------------------------------

RULE_ORDER = [
    "structure.column-missing", "structure.column-unexpected", "structure.column-duplicate",
    "structure.row-length", "structure.case-count", "structure.id-duplicate",
    "structure.id-blank", "value.not-a-number", "value.out-of-range", "value.unlabelled-code",
    "value.too-many-decimals", "value.bad-date", "value.blank", "value.pattern-mismatch",
    "value.too-long", "routing.should-be-skipped", "routing.should-be-answered",
    "consistency.failed", "documented.frequency-mismatch", "documented.statistic-mismatch",
]
DEFAULT_SEVERITY = {
    "structure.column-unexpected": "warning", "value.too-many-decimals": "warning",
    "documented.statistic-mismatch": "warning",
}

DROPPED_COLUMN = "cough"
EXTRA_COLUMN = "interviewer"


class Plan:
    """Collects planted problems as (rule, variable or check, row, raw value)."""

    def __init__(self, rows: list[dict]):
        self.rows = rows
        self.cells: list[tuple] = []
        self.used_rows: set[int] = set()

    def row(self, number: int) -> dict:
        assert number not in self.used_rows, f"row {number} planted twice"
        self.used_rows.add(number)
        return self.rows[number - 1]

    def note(self, rule: str, target: str, number: int, value):
        self.cells.append((rule, target, number, value))


def set_stove(row: dict, stove: str, age: str) -> None:
    """Force wood-stove use and stove age without breaking the wood-fuel warning check."""
    row["wood_stove"] = stove
    row["stove_age"] = age
    if stove == "2" and row["fuel"] == "4":
        row["fuel"] = "1"


def set_wheeze(row: dict, wheeze: str, night: str) -> None:
    row["wheeze"] = wheeze
    row["wheeze_night"] = night


def plant(rows: list[dict]) -> Plan:
    """Apply every planted problem in place and return the record of what was planted."""
    plan = Plan(rows)

    # Identifiers. Row 17 and row 229 are sources of duplicates and are left untouched.
    plan.used_rows.update({17, 229})
    r = plan.row(230)
    rows[229] = dict(rows[228])                      # household keyed twice
    plan.note("structure.id-duplicate", "hh_id", 230, rows[229]["hh_id"])
    r = plan.row(455)
    r["hh_id"] = rows[16]["hh_id"]                   # typo gives another household's id
    plan.note("structure.id-duplicate", "hh_id", 455, r["hh_id"])
    r = plan.row(300)
    r["hh_id"] = ""
    plan.note("structure.id-blank", "hh_id", 300, "")
    for number in (88, 89):
        r = plan.row(number)
        r["hh_id"] = r["hh_id"][:-1] if number == 88 else r["hh_id"].lower()
        plan.note("value.pattern-mismatch", "hh_id", number, r["hh_id"])

    # Numbers that do not parse. Row 120's gate is broken, so its stove age is gate-unknown.
    r = plan.row(101)
    r["heat_hours"] = "8,5"
    plan.note("value.not-a-number", "heat_hours", 101, "8,5")
    r = plan.row(120)
    set_stove(r, "Y", "15")
    plan.note("value.not-a-number", "wood_stove", 120, "Y")

    # Out of range.
    for number, value in ((140, "30"), (141, "99")):
        r = plan.row(number)
        r["heat_hours"] = value
        plan.note("value.out-of-range", "heat_hours", number, value)
    r = plan.row(150)
    set_stove(r, "1", "150")
    plan.note("value.out-of-range", "stove_age", 150, "150")
    r = plan.row(160)
    r["hh_size"] = "0"
    plan.note("value.out-of-range", "hh_size", 160, "0")

    # Codes with no label. Row 190's gate is broken, so its night-wheeze answer is gate-unknown.
    r = plan.row(175)
    r["dwelling"] = "5"
    plan.note("value.unlabelled-code", "dwelling", 175, "5")
    r = plan.row(190)
    set_wheeze(r, "3", "1")
    plan.note("value.unlabelled-code", "wheeze", 190, "3")
    for number in (200, 201, 202):
        r = plan.row(number)
        r["fuel"] = "8"
        plan.note("value.unlabelled-code", "fuel", number, "8")

    # Weights pasted at full precision.
    for number, value in ((250, "1.046213"), (251, "0.873390"), (252, "2.118054"), (253, "0.951207")):
        r = plan.row(number)
        r["hh_weight"] = value
        plan.note("value.too-many-decimals", "hh_weight", number, value)

    # Dates: impossible, before fieldwork, day-first format.
    for number, value in ((320, "2026-02-30"), (321, "2025-12-30"), (322, "16/02/2026")):
        r = plan.row(number)
        r["interview_date"] = value
        plan.note("value.bad-date", "interview_date", number, value)

    # Blanks where no blank meaning applies. Row 345's gate is blank, so stove age is gate-unknown.
    r = plan.row(340)
    r["heat_hours"] = ""
    plan.note("value.blank", "heat_hours", 340, "")
    r = plan.row(341)
    r["district"] = ""
    plan.note("value.blank", "district", 341, "")
    r = plan.row(345)
    set_stove(r, "", "7")
    plan.note("value.blank", "wood_stove", 345, "")

    # Notes over the length limit.
    for number, value in (
        (360, "Respondent says the stove smokes into the room when the wind is from the east"),
        (361, "Second visit; first visit nobody home, neighbour says family away until March"),
    ):
        r = plan.row(number)
        r["int_note"] = value
        plan.note("value.too-long", "int_note", number, value)

    # Routing: answered outside the universe (a don't-know code counts too), skipped inside it.
    r = plan.row(400)
    set_stove(r, "2", "12")
    plan.note("routing.should-be-skipped", "stove_age", 400, "12")
    r = plan.row(401)
    set_stove(r, "2", "998")
    plan.note("routing.should-be-skipped", "stove_age", 401, "998")
    r = plan.row(410)
    set_wheeze(r, "2", "2")
    plan.note("routing.should-be-skipped", "wheeze_night", 410, "2")
    r = plan.row(420)
    set_stove(r, "1", "")
    plan.note("routing.should-be-answered", "stove_age", 420, "")
    r = plan.row(421)
    set_stove(r, "1", "996")
    plan.note("routing.should-be-answered", "stove_age", 421, "996")
    r = plan.row(430)
    set_wheeze(r, "1", "")
    plan.note("routing.should-be-answered", "wheeze_night", 430, "")

    # Consistency checks.
    r = plan.row(450)
    r["fuel"] = "7"
    r["heat_hours"] = "6.0"
    plan.note("consistency.failed", "no-heating-no-hours", 450, None)
    for number in (460, 461):
        r = plan.row(number)
        set_stove(r, "2", "")
        r["fuel"] = "4"
        plan.note("consistency.failed", "wood-fuel-has-stove", number, None)

    # Ragged rows: an unquoted comma in a note, and a record cut off at the end of the file.
    r = plan.row(157)
    r["int_note"] = "Stove removed, chimney capped"
    plan.note("structure.row-length", None, 157, None)
    r = plan.row(len(rows))
    plan.note("structure.row-length", None, len(rows), None)
    return plan


def wave2_header() -> list[str]:
    header = [name for name in COLUMN_NAMES if name != DROPPED_COLUMN]
    header.insert(header.index("interview_date") + 1, EXTRA_COLUMN)
    return header


def wave2_lines(rows: list[dict], header: list[str]) -> tuple[list[str], dict[int, int]]:
    """Serialise wave 2; the two ragged rows are written by hand. Returns lines and field counts."""
    lines = []
    ragged_fields = {}
    for number, row in enumerate(rows, start=1):
        fields = [row[name] for name in header]
        if number == 157:
            # The note went out unquoted, so its comma splits it into two fields.
            assert header[-1] == "int_note"
            assert all("," not in f and '"' not in f for f in fields[:-1])
            line = ",".join(fields) + "\n"
            ragged_fields[number] = line.count(",") + 1
        elif number == len(rows):
            # Transfer cut off after the interview date: the last record is short, no newline.
            cut = header.index("interview_date") + 1
            line = csv_line(fields[:cut]).rstrip("\n")
            ragged_fields[number] = cut
        else:
            line = csv_line(fields)
        lines.append(line)
    return lines, ragged_fields


def build_expected(plan: Plan, rows: list[dict], ragged_fields: dict[int, int],
                   documented: dict, header: list[str]) -> dict:
    findings = []

    def add(rule, variable=None, check=None, count=0, examples=None, severity=None, **extra):
        entry = {"rule": rule, "severity": severity or DEFAULT_SEVERITY.get(rule, "error"),
                 "variable": variable}
        if rule == "consistency.failed":
            entry["check"] = check
        entry["count"] = count
        entry["examples"] = examples or []
        entry.update(extra)
        findings.append(entry)

    add("structure.column-missing", DROPPED_COLUMN, count=1)
    add("structure.column-unexpected", EXTRA_COLUMN, count=1)
    add("structure.case-count", None, count=1, documented=documented["cases"], actual=len(rows))

    groups: dict[tuple, list] = {}
    for rule, target, number, value in plan.cells:
        groups.setdefault((rule, target), []).append((number, value))
    var_order = {name: i for i, name in enumerate(COLUMN_NAMES)}
    check_order = {c["name"]: i for i, c in enumerate(CHECKS)}
    for (rule, target), cells in groups.items():
        cells.sort()
        examples = []
        for number, value in cells[:MAX_EXAMPLES]:
            case = rows[number - 1]["hh_id"] or None
            example = {"row": number, "case": case, "value": value}
            if rule == "structure.row-length":
                example["value"] = None
                example["fields"] = ragged_fields[number]
            examples.append(example)
        if rule == "consistency.failed":
            check = next(c for c in CHECKS if c["name"] == target)
            add(rule, None, target, len(cells), examples, severity=check["severity"])
        elif rule == "structure.row-length":
            add(rule, None, count=len(cells), examples=examples, expected_fields=len(header))
        else:
            add(rule, target, count=len(cells), examples=examples)

    # Documented figures: wave 2's rows that are checked (the two ragged rows are not).
    checked = [row for n, row in enumerate(rows, start=1) if n not in ragged_fields]
    for name, documented_counts in documented["frequencies"].items():
        actual = category_counts(checked, name)
        # Robust to a checker that also counts the ragged rows: the same categories differ.
        with_ragged = category_counts(rows, name)
        differing = [c for c in actual if actual[c] != documented_counts[c]]
        assert differing == [c for c in with_ragged if with_ragged[c] != documented_counts[c]]
        labels = {c["code"]: c["label"] for c in VAR_BY_NAME[name]["categories"]}
        add("documented.frequency-mismatch", name, count=len(differing),
            examples=[{"code": c, "label": labels[c], "documented": documented_counts[c],
                       "actual": actual[c]} for c in differing[:MAX_EXAMPLES]],
            categories=[{"code": c, "documented": documented_counts[c], "actual": actual[c]}
                        for c in actual])
    for name, doc in documented["statistics"].items():
        actual = numeric_statistics(checked, name)
        with_ragged = numeric_statistics(rows, name)
        differing = []
        for figure in ("valid", "mean", "sd", "min", "max"):
            documented_value = round(doc[figure], 2)
            if abs(actual[figure] - documented_value) > 0.005 + 1e-9:
                differing.append(figure)
                # Not a near miss, and unchanged if the ragged rows were counted.
                assert abs(actual[figure] - documented_value) > 0.05
                assert abs(with_ragged[figure] - documented_value) > 0.05
            else:
                assert abs(with_ragged[figure] - documented_value) <= 0.005
        add("documented.statistic-mismatch", name, count=len(differing),
            examples=[{"statistic": f, "documented": round(doc[f], 2),
                       "actual": round(actual[f], 4)} for f in differing])

    def sort_key(entry):
        target = entry.get("check") or entry["variable"] or ""
        order = check_order.get(target, var_order.get(target, 99))
        return (RULE_ORDER.index(entry["rule"]), order, target)

    findings.sort(key=sort_key)
    errors = sum(1 for f in findings if f["severity"] == "error")
    warnings = sum(1 for f in findings if f["severity"] == "warning")
    return {
        "codebook": "codebook.toml",
        "data": "wave2.csv",
        "rows": len(rows),
        "passed": errors == 0,
        "errors": errors,
        "warnings": warnings,
        "conventions": CONVENTIONS,
        "findings": findings,
        "not_findings": NOT_FINDINGS,
    }


CONVENTIONS = {
    "rows": "data rows in the file, ragged rows included; row numbers are 1-based data rows "
            "(the header is not counted)",
    "structure.column-missing / column-unexpected / column-duplicate / case-count":
        "one finding per column (or per file for case-count), count 1, no row examples",
    "structure.row-length": "a row with the wrong number of fields is reported once and none of "
                            "its cells is checked further: it takes no part in value, routing, "
                            "id, check or documented-figure counts",
    "structure.id-blank": "a blank key cell is reported only as structure.id-blank (not also "
                          "value.blank) and takes no part in duplicate detection",
    "consistency.failed": "a check is evaluated only where `when` is true; an assert that is "
                          "unknown is not a failure. The data contain no row where `when` is "
                          "unknown and the assert false, so either reading of an unknown `when` "
                          "gives these counts",
    "documented.frequency-mismatch": "count = categories whose unweighted count of valid cells "
                                     "differs from `frequency`; `categories` lists every one",
    "documented.statistic-mismatch": "count = figures (valid, mean, sd with n-1, min, max) over "
                                     "valid cells that differ from `documented` by more than "
                                     "the documented rounding (0.005)",
    "examples": "first 5 by row; `case` is the trimmed hh_id cell (null when blank)",
}

NOT_FINDINGS = [
    {"row": 120, "variable": "stove_age", "value": "15",
     "why": "gate wood_stove holds 'Y' (value.not-a-number), so the universe is unknown: "
            "gate-unknown, no routing finding"},
    {"row": 190, "variable": "wheeze_night", "value": "1",
     "why": "gate wheeze holds unlabelled code 3, so the universe is unknown: gate-unknown"},
    {"row": 345, "variable": "stove_age", "value": "7",
     "why": "gate wood_stove is blank (value.blank), so the universe is unknown: gate-unknown"},
    {"row": 150, "variable": "stove_age", "value": "150",
     "why": "out of range inside the universe: one value finding, no routing finding"},
    {"rows": [200, 201, 202], "variable": "fuel", "value": "8",
     "why": "unlabelled fuel counts as missing in the checks: answered(fuel) is false and "
            "'fuel != 4' is unknown, so neither check fails"},
    {"rows": [101, 140, 141, 340], "variable": "heat_hours",
     "why": "broken heat_hours cells count as missing: excluded from the documented figures and "
            "'heat_hours == 0' is unknown, not a failure"},
]

# ---------------------------------------------------------------------------------------------


def main() -> None:
    wave1 = make_wave(WAVE1_SEED, WAVE1_ROWS, 10000, date(2026, 1, 5), date(2026, 2, 15))
    wave2 = make_wave(WAVE2_SEED, WAVE2_ROWS, 20000, date(2026, 2, 16), date(2026, 3, 31))

    documented = {
        "cases": len(wave1),
        "frequencies": {v["name"]: category_counts(wave1, v["name"])
                        for v in VARIABLES if v.get("document_frequency")},
        "statistics": {v["name"]: numeric_statistics(wave1, v["name"])
                       for v in VARIABLES if v.get("document_statistics")},
    }
    assert all(n > 0 for counts in documented["frequencies"].values() for n in counts.values())

    write_codebook(HERE / "codebook.toml", documented, fixed=False)
    write_codebook(HERE / "codebook-fixed.toml", documented, fixed=True)
    write_csv(HERE / "wave1.csv", COLUMN_NAMES, [csv_line([r[n] for n in COLUMN_NAMES]) for r in wave1])
    write_fixed(HERE / "wave1-fixed.txt", wave1)

    dup_header = COLUMN_NAMES + ["hh_weight"]
    write_csv(HERE / "wave1-dup-header.csv", dup_header,
              [csv_line([r[n] for n in dup_header]) for r in wave1])
    write_json(HERE / "expected-wave1-dup-header.json", {
        "codebook": "codebook.toml", "data": "wave1-dup-header.csv", "rows": len(wave1),
        "passed": False, "errors": 1, "warnings": 0,
        "conventions": {"structure.column-duplicate": "the second hh_weight column repeats the "
                        "first cell for cell; only the header is at fault"},
        "findings": [{"rule": "structure.column-duplicate", "severity": "error",
                      "variable": "hh_weight", "count": 1, "examples": []}],
    })

    for number, row in enumerate(wave2, start=1):
        row[EXTRA_COLUMN] = f"I{1 + (number * 7) % 12:02d}"
    plan = plant(wave2)
    header = wave2_header()
    lines, ragged_fields = wave2_lines(wave2, header)
    write_csv(HERE / "wave2.csv", header, lines)
    write_json(HERE / "expected-wave2.json", build_expected(plan, wave2, ragged_fields, documented, header))


if __name__ == "__main__":
    main()
