#!/usr/bin/env python3
"""Builds the table of external checks in docs/validation.md from a test run.

Tests record each comparison with a value from outside the project through
tests/check_record.h (GoogleTest RecordProperty "check: <quantity>" =
"source<TAB>expected<TAB>ours<TAB>tolerance<TAB>unit"). This script runs
every test executable of a build folder with --gtest_output=json, collects
the checks and rewrites the part of docs/validation.md between the markers
<!-- checks:begin --> and <!-- checks:end -->.

Usage: python3 tools/validation_table.py [BUILD_DIR] [--doc docs/validation.md]
"""
import argparse
import glob
import json
import os
import subprocess
import sys
import tempfile

BEGIN = "<!-- checks:begin -->"
END = "<!-- checks:end -->"


def collect(build):
    exes = sorted(glob.glob(os.path.join(build, "tests", "figura_*_tests")))
    if not exes:
        sys.exit(f"validation_table: no test executables under {build}/tests "
                 "(build the project with tests first)")
    rows, failures = [], []
    env = dict(os.environ, OPENCV_LOG_LEVEL="ERROR")
    with tempfile.TemporaryDirectory() as tmp:
        for exe in exes:
            out = os.path.join(tmp, os.path.basename(exe) + ".json")
            subprocess.run([exe, f"--gtest_output=json:{out}"], env=env,
                           stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                           check=False)
            if not os.path.exists(out):
                failures.append(f"{os.path.basename(exe)}: no result file")
                continue
            with open(out, encoding="utf-8") as f:
                report = json.load(f)
            layer = os.path.basename(exe)[len("figura_"):-len("_tests")]
            for suite in report.get("testsuites", []):
                for case in suite.get("testsuite", []):
                    name = f"{suite['name']}.{case['name']}"
                    failed = bool(case.get("failures"))
                    props = {k: v for k, v in case.items()
                             if isinstance(k, str) and k.startswith("check: ")}
                    for p in case.get("properties", []) or []:
                        if p.get("name", "").startswith("check: "):
                            props[p["name"]] = p.get("value", "")
                    for key, value in props.items():
                        parts = str(value).split("\t")
                        if len(parts) != 5:
                            continue
                        source, expected, ours, tol, unit = parts
                        rows.append(dict(layer=layer, test=name,
                                         quantity=key[len("check: "):],
                                         source=source, expected=float(expected),
                                         ours=float(ours), tolerance=float(tol),
                                         unit=unit, failed=failed))
    return rows, failures


def fmt(x):
    if x == 0:
        return "0"
    if abs(x) >= 1e5 or abs(x) < 1e-3:
        return f"{x:.4g}"
    return f"{x:.6g}"


def table(rows):
    lines = ["| layer | quantity | source | expected | ours | tolerance | unit | within | test |",
             "| --- | --- | --- | --- | --- | --- | --- | --- | --- |"]
    for r in sorted(rows, key=lambda r: (r["layer"], r["test"], r["quantity"])):
        within = abs(r["ours"] - r["expected"]) <= r["tolerance"]
        cell = lambda s: str(s).replace("|", "\\|")
        lines.append("| " + " | ".join([
            r["layer"], cell(r["quantity"]), cell(r["source"]),
            fmt(r["expected"]), fmt(r["ours"]), "± " + fmt(r["tolerance"]),
            r["unit"], "yes" if within else "**no**", f"`{r['test']}`"]) + " |")
    return "\n".join(lines)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("build", nargs="?", default="build")
    ap.add_argument("--doc", default=os.path.join(
        os.path.dirname(os.path.abspath(__file__)), "..", "docs", "validation.md"))
    args = ap.parse_args()
    rows, failures = collect(args.build)
    with open(args.doc, encoding="utf-8") as f:
        doc = f.read()
    if BEGIN not in doc or END not in doc:
        sys.exit(f"validation_table: {args.doc} lacks the markers {BEGIN} / {END}")
    head, rest = doc.split(BEGIN, 1)
    _, tail = rest.split(END, 1)
    body = table(rows)
    if failures:
        body += "\n\nNot run: " + "; ".join(failures)
    tmp = args.doc + ".tmp"
    with open(tmp, "w", encoding="utf-8") as f:
        f.write(head + BEGIN + "\n" + body + "\n" + END + tail)
    os.replace(tmp, args.doc)
    outside = sum(1 for r in rows if abs(r["ours"] - r["expected"]) > r["tolerance"])
    print(f"validation_table: {len(rows)} checks written to {args.doc}; "
          f"{outside} outside their tolerance")
    return 1 if outside else 0


if __name__ == "__main__":
    sys.exit(main())
