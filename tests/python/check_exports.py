#!/usr/bin/env python3
"""Checks that `themata export` tables load in data tools with their defaults.

    python3 tests/python/check_exports.py THEMATA_BINARY MODEL_DIR WORK_DIR

Writes every table (topic-words, document-topics, topics) of MODEL_DIR in
both formats into WORK_DIR, then loads each CSV with pandas.read_csv (and
polars.read_csv when polars is installed) using their default arguments, and
each JSON Lines file with pandas.read_json(lines=True), and checks the column
names, their order and their types, and a few facts about the numbers (shares
between 0 and 1, each document's shares summing to 1, the same values in CSV
and JSON Lines). Prints one line per check and a closing "N passed, N failed"
line; exits 1 when a check failed or when nothing was checked.

Sources: pandas.read_csv documentation (type inference: integers int64,
decimals float64, True/False/true/false as bool, text as object or, from
pandas 3, str); polars.read_csv documentation (schema inferred from the first
100 rows: Int64, Float64, Boolean, String); RFC 4180 (the CSV layout).
"""

import subprocess
import sys
from pathlib import Path

import pandas as pd
from pandas.api import types

# Column -> kind, in order. "label" and "date" appear only when the model's
# documents have them (the demo's do).
TABLES = {
    "topic-words": [
        ("topic", "int"), ("topic_id", "int"), ("topic_name", "str"), ("named", "bool"),
        ("rank", "int"), ("word", "str"), ("vocabulary_word", "str"),
        ("weight", "float"), ("low", "float"), ("high", "float"),
    ],
    "document-topics": [
        ("document", "str"), ("document_index", "int"), ("label", "str"), ("date", "str"),
        ("topic", "int"), ("topic_id", "int"), ("topic_name", "str"),
        ("share", "float"), ("low", "float"), ("high", "float"),
    ],
    "topics": [
        ("topic", "int"), ("topic_id", "int"), ("topic_name", "str"), ("named", "bool"),
        ("share", "float"), ("alpha", "float"), ("leading_documents", "int"), ("top_words", "str"),
    ],
}

PANDAS_KINDS = {
    "int": types.is_integer_dtype,
    "float": types.is_float_dtype,
    "bool": types.is_bool_dtype,
    "str": lambda dtype: types.is_string_dtype(dtype) or types.is_object_dtype(dtype),
}

passed = 0
failed = 0


def check(condition, what):
    global passed, failed
    if condition:
        passed += 1
        print(f"ok: {what}")
    else:
        failed += 1
        print(f"FAILED: {what}")


def export(binary, model, table, fmt, out):
    subprocess.run(
        [binary, "export", str(model), "--table", table, "--format", fmt, "--out", str(out)],
        check=True,
    )


def check_pandas(table, path, columns):
    frame = pd.read_csv(path)
    names = [name for name, _ in columns]
    check(list(frame.columns) == names, f"pandas read_csv {table}: columns {names}")
    check(len(frame) > 0, f"pandas read_csv {table}: {len(frame)} rows")
    for name, kind in columns:
        dtype = frame[name].dtype
        check(PANDAS_KINDS[kind](dtype), f"pandas read_csv {table}: {name} is {kind} ({dtype})")
    return frame


def check_numbers(table, frame):
    for column in ("weight", "share", "low", "high"):
        if column in frame.columns:
            inside = frame[column].between(0.0, 1.0).all()
            check(bool(inside), f"{table}: {column} lies in [0, 1]")
    if {"low", "high"} <= set(frame.columns):
        value = "share" if "share" in frame.columns else "weight"
        ordered = ((frame["low"] <= frame[value]) & (frame[value] <= frame["high"])).all()
        check(bool(ordered), f"{table}: low <= {value} <= high")
    if table == "document-topics":
        # A document's topic shares are a distribution: they sum to 1.
        sums = frame.groupby("document_index")["share"].sum()
        check(bool(((sums - 1.0).abs() < 1e-9).all()), "document-topics: each document's shares sum to 1")
    if table == "topics":
        check(abs(frame["share"].sum() - 1.0) < 1e-9, "topics: topic shares sum to 1")


def check_jsonl(table, path, csv_frame, columns):
    frame = pd.read_json(path, lines=True)
    names = [name for name, _ in columns]
    check(list(frame.columns) == names, f"pandas read_json lines {table}: same columns")
    check(len(frame) == len(csv_frame), f"pandas read_json lines {table}: same rows as the CSV")
    for name, kind in columns:
        if kind == "float":
            # read_json's default float parser (precise_float=False) may
            # differ from the shortest round-trip form in the last bit.
            close = ((frame[name] - csv_frame[name]).abs() <= 1e-12).all()
            check(bool(close), f"{table}: {name} the same in CSV and JSON Lines (within 1e-12)")


def check_polars(table, path, columns):
    try:
        import polars as pl
    except ImportError:
        print(f"note: polars is not installed; {table} not checked with polars")
        return
    frame = pl.read_csv(path)
    names = [name for name, _ in columns]
    check(frame.columns == names, f"polars read_csv {table}: columns")
    kinds = {"int": pl.Int64, "float": pl.Float64, "bool": pl.Boolean, "str": pl.String}
    for name, kind in columns:
        dtype = frame.schema[name]
        check(dtype == kinds[kind], f"polars read_csv {table}: {name} is {kind} ({dtype})")


def main():
    if len(sys.argv) != 4:
        print(__doc__)
        return 2
    binary, model, work = sys.argv[1], Path(sys.argv[2]), Path(sys.argv[3])
    work.mkdir(parents=True, exist_ok=True)
    for table, columns in TABLES.items():
        csv_path = work / f"{table}.csv"
        jsonl_path = work / f"{table}.jsonl"
        export(binary, model, table, "csv", csv_path)
        export(binary, model, table, "jsonl", jsonl_path)
        frame = check_pandas(table, csv_path, columns)
        check_numbers(table, frame)
        check_jsonl(table, jsonl_path, frame, columns)
        check_polars(table, csv_path, columns)
    print(f"{passed} passed, {failed} failed")
    return 0 if failed == 0 and passed > 0 else 1


if __name__ == "__main__":
    sys.exit(main())
