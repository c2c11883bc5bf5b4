#!/usr/bin/env python3
"""Independent re-check of the demo files: a small checker written from DESIGN section 5.

It shares no code with generate.py. It reads the codebooks and data files afresh, classifies
every cell, evaluates universes and checks with three-valued logic, and then proves that
  * wave1.csv and wave1-fixed.txt have no finding at all,
  * wave2.csv gives exactly the findings in expected-wave2.json (rule, target, count, example rows),
  * wave1-dup-header.csv gives exactly expected-wave1-dup-header.json,
  * no row of any file has a check whose `when` is unknown while its assert is false (the one
    reading DESIGN leaves open), so the expected counts do not depend on that choice.

Python 3.11 standard library only. Run: python3 demo-data/verify.py
"""

from __future__ import annotations

import csv
import json
import math
import re
import sys
import tomllib
from datetime import date
from pathlib import Path

HERE = Path(__file__).resolve().parent
NUMBER = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)$")

# --- condition language: tokens, parser to nested tuples, Kleene evaluation ------------------

TOKEN = re.compile(r"\s*(?:(\d+(?:\.\d+)?)|(\"[^\"]*\")|(==|!=|<=|>=|<|>|\(|\)|\[|\]|,|\+|-|\*|/)|([A-Za-z_][A-Za-z_0-9]*))")


def tokenize(text):
    tokens, pos = [], 0
    while pos < len(text):
        if text[pos:].strip() == "":
            break
        m = TOKEN.match(text, pos)
        if not m:
            raise ValueError(f"bad condition at {pos}: {text}")
        number, string, op, name = m.groups()
        if number is not None:
            tokens.append(("num", float(number)))
        elif string is not None:
            tokens.append(("str", string[1:-1]))
        elif op is not None:
            tokens.append(("op", op))
        else:
            tokens.append(("kw", name) if name in ("and", "or", "not", "in") else ("name", name))
        pos = m.end()
    return tokens


class Parser:
    def __init__(self, text):
        self.tokens = tokenize(text) + [("end", None)]
        self.i = 0

    def peek(self):
        return self.tokens[self.i]

    def take(self):
        self.i += 1
        return self.tokens[self.i - 1]

    def parse(self):
        node = self.or_()
        assert self.peek()[0] == "end"
        return node

    def or_(self):
        node = self.and_()
        while self.peek() == ("kw", "or"):
            self.take()
            node = ("or", node, self.and_())
        return node

    def and_(self):
        node = self.not_()
        while self.peek() == ("kw", "and"):
            self.take()
            node = ("and", node, self.not_())
        return node

    def not_(self):
        if self.peek() == ("kw", "not"):
            self.take()
            return ("not", self.not_())
        return self.comparison()

    def comparison(self):
        left = self.sum_()
        tok = self.peek()
        if tok[0] == "op" and tok[1] in ("==", "!=", "<", "<=", ">", ">="):
            self.take()
            return ("cmp", tok[1], left, self.sum_())
        if tok == ("kw", "in"):
            self.take()
            assert self.take() == ("op", "[")
            items = [self.sum_()]
            while self.peek() == ("op", ","):
                self.take()
                items.append(self.sum_())
            assert self.take() == ("op", "]")
            return ("in", left, items)
        return left

    def sum_(self):
        node = self.product()
        while self.peek()[0] == "op" and self.peek()[1] in "+-":
            node = ("arith", self.take()[1], node, self.product())
        return node

    def product(self):
        node = self.atom()
        while self.peek()[0] == "op" and self.peek()[1] in "*/":
            node = ("arith", self.take()[1], node, self.atom())
        return node

    def atom(self):
        kind, value = self.take()
        if kind in ("num", "str"):
            return ("lit", value)
        if kind == "op" and value == "(":
            node = self.or_()
            assert self.take() == ("op", ")")
            return node
        if kind == "op" and value == "-":
            return ("arith", "-", ("lit", 0.0), self.atom())
        if kind == "name":
            if self.peek() == ("op", "("):
                self.take()
                arg = self.take()
                assert arg[0] == "name"
                assert self.take() == ("op", ")")
                return ("func", value, arg[1])
            return ("var", value)
        raise ValueError(f"unexpected token {value}")


def evaluate(node, values):
    """values: name -> number (valid) or None (missing, skipped or a value finding)."""
    kind = node[0]
    if kind == "lit":
        return node[1]
    if kind == "var":
        return values[node[1]]
    if kind == "func":
        known = values[node[2]] is not None
        return known if node[1] == "answered" else not known
    if kind == "arith":
        a, b = evaluate(node[2], values), evaluate(node[3], values)
        if a is None or b is None:
            return None
        return {"+": a + b, "-": a - b, "*": a * b, "/": a / b if b else None}[node[1]]
    if kind == "cmp":
        a, b = evaluate(node[2], values), evaluate(node[3], values)
        if a is None or b is None:
            return None
        return {"==": a == b, "!=": a != b, "<": a < b, "<=": a <= b, ">": a > b, ">=": a >= b}[node[1]]
    if kind == "in":
        a = evaluate(node[1], values)
        return None if a is None else any(a == evaluate(i, values) for i in node[2])
    if kind == "not":
        a = evaluate(node[1], values)
        return None if a is None else not a
    a, b = evaluate(node[1], values), evaluate(node[2], values)
    if kind == "and":
        if a is False or b is False:
            return False
        return None if a is None or b is None else True
    if a is True or b is True:
        return True
    return None if a is None or b is None else False


# --- cell classification ---------------------------------------------------------------------


def parse_date(text):
    if not re.fullmatch(r"\d{4}-\d{2}-\d{2}", text):
        return None
    try:
        return date.fromisoformat(text)
    except ValueError:
        return None


def matches_code(code, cell):
    if isinstance(code, str):
        return cell == code
    return bool(NUMBER.match(cell)) and float(cell) == float(code)


def classify(var, raw, dataset, id_vars):
    """Return ('valid', value) | ('missing', kind, was_blank) | ('finding', rule)."""
    cell = raw.strip()
    if cell == "":
        if var["name"] in id_vars:
            return ("finding", "structure.id-blank")
        meaning = var.get("blank", dataset.get("blank"))
        return ("missing", meaning, True) if meaning else ("finding", "value.blank")
    for code in var.get("missing", []):
        if matches_code(code["code"], cell):
            return ("missing", code["kind"], False)
    kind = var["kind"]
    if kind in ("categorical", "ordinal"):
        for category in var["categories"]:
            if matches_code(category["code"], cell):
                return ("valid", float(cell) if NUMBER.match(cell) else cell)
        if not NUMBER.match(cell):
            return ("finding", "value.not-a-number")
        return ("finding", "value.unlabelled-code")
    if kind == "numeric":
        if not NUMBER.match(cell):
            return ("finding", "value.not-a-number")
        value = float(cell)
        for category in var.get("categories", []):
            if matches_code(category["code"], cell):
                return ("valid", value)
        bounds = var.get("range", {})
        if ("min" in bounds and value < bounds["min"]) or ("max" in bounds and value > bounds["max"]):
            return ("finding", "value.out-of-range")
        places = len(cell.split(".")[1]) if "." in cell else 0
        if "decimals" in var and places > var["decimals"]:
            return ("finding", "value.too-many-decimals")
        return ("valid", value)
    if kind == "date":
        day = parse_date(cell)
        bounds = var.get("range", {})
        if day is None or ("min" in bounds and day < date.fromisoformat(bounds["min"])) or (
                "max" in bounds and day > date.fromisoformat(bounds["max"])):
            return ("finding", "value.bad-date")
        return ("valid", day.toordinal())
    # text and identifier
    if "pattern" in var and not re.fullmatch(var["pattern"], cell):
        return ("finding", "value.pattern-mismatch")
    if "max_length" in var and len(cell) > var["max_length"]:
        return ("finding", "value.too-long")
    return ("valid", cell)


# --- the checker -----------------------------------------------------------------------------


class Findings:
    def __init__(self):
        self.groups = {}

    def add(self, rule, target, row=None, case=None, value=None):
        entry = self.groups.setdefault((rule, target), {"count": 0, "examples": []})
        entry["count"] += 1
        if row is not None and len(entry["examples"]) < 5:
            entry["examples"].append({"row": row, "case": case, "value": value})


def read_records(codebook, path):
    layout = codebook.get("file", {})
    text = path.read_text(encoding="utf-8")
    if layout.get("layout") == "fixed":
        spans = [(v["name"], v["columns"]["start"], v["columns"]["end"]) for v in codebook["variables"]]
        length = max(end for _, _, end in spans)
        header = [name for name, _, _ in spans]
        records = []
        for line in text.split("\n")[:-1] if text.endswith("\n") else text.split("\n"):
            fields = [line[s - 1:e] for _, s, e in spans]
            records.append((len(line) == length, fields))
        return header, records
    reader = csv.reader(text.splitlines(), delimiter=layout.get("delimiter", ","))
    rows = list(reader)
    header, body = rows[0], rows[1:]
    return header, [(len(r) == len(header), r) for r in body]


def check(codebook_path, data_path):
    codebook = tomllib.loads(codebook_path.read_text(encoding="utf-8"))
    dataset = codebook["dataset"]
    variables = codebook["variables"]
    id_vars = dataset.get("id", [])
    header, records = read_records(codebook, data_path)
    found = Findings()
    ambiguous = []

    names = [v["name"] for v in variables]
    for name in names:
        if name not in header:
            found.add("structure.column-missing", name)
    for column in header:
        if column not in names:
            found.add("structure.column-unexpected", column)
    seen_columns = set()
    for column in header:
        if column in seen_columns:
            found.add("structure.column-duplicate", column)
        seen_columns.add(column)
    present = [v for v in variables if v["name"] in header]
    position = {v["name"]: header.index(v["name"]) for v in present}
    if "cases" in dataset and len(records) != dataset["cases"]:
        found.add("structure.case-count", None)

    universes = {v["name"]: Parser(v["universe"]).parse() for v in present if "universe" in v}
    checks = [(c, Parser(c["assert"]).parse(), Parser(c["when"]).parse() if "when" in c else None)
              for c in codebook.get("checks", [])]
    keys_seen = set()
    counts = {v["name"]: {} for v in present if any("frequency" in c for c in v.get("categories", []))}
    stats = {v["name"]: [] for v in present if "documented" in v}
    gate_unknown = {name: 0 for name in universes}

    for number, (well_formed, record) in enumerate(records, start=1):
        case = record[position[id_vars[0]]].strip() or None if id_vars and record else None
        if not well_formed:
            found.add("structure.row-length", None, number, case)
            continue
        states = {v["name"]: classify(v, record[position[v["name"]]], dataset, id_vars) for v in present}
        values = {name: (s[1] if s[0] == "valid" else None) for name, s in states.items()}
        for name in names:
            values.setdefault(name, None)
        for var in present:
            name = var["name"]
            state = states[name]
            raw = record[position[name]]
            if state[0] == "finding":
                found.add(state[1], name, number, case, raw)
                continue
            if name in universes:
                answer = evaluate(universes[name], values)
                is_skip = state[0] == "missing" and (state[1] == "skipped")
                was_blank = state[0] == "missing" and state[2]
                if answer is False and not (was_blank or is_skip):
                    found.add("routing.should-be-skipped", name, number, case, raw)
                    continue
                if answer is True and is_skip:
                    found.add("routing.should-be-answered", name, number, case, raw)
                    continue
                if answer is None:
                    gate_unknown[name] += 1
            if state[0] == "valid":
                if name in counts:
                    counts[name][state[1]] = counts[name].get(state[1], 0) + 1
                if name in stats:
                    stats[name].append(state[1])
        if id_vars and states[id_vars[0]] != ("finding", "structure.id-blank"):
            key = tuple(record[position[k]].strip() for k in id_vars)
            if key in keys_seen:
                found.add("structure.id-duplicate", id_vars[0], number, case, record[position[id_vars[0]]])
            keys_seen.add(key)
        for chk, assertion, when in checks:
            gate = True if when is None else evaluate(when, values)
            result = evaluate(assertion, values)
            if gate is None and result is False:
                ambiguous.append((number, chk["name"]))
            if gate is True and result is False:
                found.add("consistency.failed", chk["name"], number, case, None)

    documented = {}
    for var in present:
        name = var["name"]
        if name in counts:
            differing = [c for c in var["categories"]
                         if "frequency" in c and counts[name].get(float(c["code"]), 0) != c["frequency"]]
            for _ in differing:
                found.add("documented.frequency-mismatch", name)
            documented[name] = {c["code"]: counts[name].get(float(c["code"]), 0) for c in var["categories"]}
        if name in stats:
            xs = stats[name]
            n = len(xs)
            mean = sum(xs) / n
            sd = math.sqrt(sum((x - mean) ** 2 for x in xs) / (n - 1))
            actual = {"valid": n, "mean": mean, "sd": sd, "min": min(xs), "max": max(xs)}
            for figure, doc_value in var["documented"].items():
                if abs(actual[figure] - doc_value) > 0.005 + 1e-9:
                    found.add("documented.statistic-mismatch", name)
            documented[name] = actual
    return found, ambiguous, len(records), gate_unknown, documented


def compare(found, expected_path):
    expected = json.loads(expected_path.read_text(encoding="utf-8"))
    want = {}
    for f in expected["findings"]:
        target = f.get("check") or f["variable"]
        rows = [e["row"] for e in f["examples"] if "row" in e]
        want[(f["rule"], target)] = (f["count"], rows, [e.get("case") for e in f["examples"] if "row" in e],
                                     [e.get("value") for e in f["examples"] if "row" in e])
    got = {}
    for key, entry in found.groups.items():
        examples = entry["examples"]
        got[key] = (entry["count"], [e["row"] for e in examples], [e["case"] for e in examples],
                    [e["value"] for e in examples])
    problems = []
    for key in sorted(set(want) | set(got), key=str):
        w, g = want.get(key), got.get(key)
        if w is None or g is None or w[0] != g[0] or w[1] != g[1] or w[2] != g[2]:
            problems.append(f"{key}: expected {w}, recounted {g}")
        else:
            # Raw values: row-length and check examples carry none in the expected file.
            for ew, eg in zip(w[3], g[3]):
                if ew is not None and ew != eg:
                    problems.append(f"{key}: example value {ew!r} vs {eg!r}")
    return problems, expected


def main():
    failures = []
    for codebook, data in (("codebook.toml", "wave1.csv"), ("codebook-fixed.toml", "wave1-fixed.txt")):
        found, ambiguous, rows, gate_unknown, _ = check(HERE / codebook, HERE / data)
        if found.groups or ambiguous:
            failures.append(f"{data} is not clean: {found.groups} {ambiguous}")
        print(f"{data}: {rows} rows, no findings; gate-unknown {gate_unknown}")

    for data, expected_name in (("wave2.csv", "expected-wave2.json"),
                                ("wave1-dup-header.csv", "expected-wave1-dup-header.json")):
        found, ambiguous, rows, gate_unknown, documented = check(HERE / "codebook.toml", HERE / data)
        problems, expected = compare(found, HERE / expected_name)
        if expected["rows"] != rows:
            problems.append(f"rows {expected['rows']} vs {rows}")
        if ambiguous:
            problems.append(f"rows with unknown `when` and false assert: {ambiguous}")
        if data == "wave2.csv":
            for f in expected["findings"]:
                if f["rule"] == "documented.frequency-mismatch":
                    actual = {c["code"]: c["actual"] for c in f["categories"]}
                    if actual != documented[f["variable"]]:
                        problems.append(f"{f['variable']} counts {actual} vs {documented[f['variable']]}")
        failures.extend(f"{data}: {p}" for p in problems)
        print(f"{data}: {rows} rows, {len(found.groups)} findings match {expected_name}"
              f"{'' if not problems else ' -- NOT'}; gate-unknown {gate_unknown}")

    if failures:
        print("\n".join(failures), file=sys.stderr)
        sys.exit(1)
    print("all demo files verified")


if __name__ == "__main__":
    main()
