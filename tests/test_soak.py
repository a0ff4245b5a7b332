"""Soak: many randomly mutated copies of examples/hollowmere-week.xlsx through `costing check`
and `costing run` (in-process, through cli.main). Each must end with exit code 0 or 1 (never a
traceback), leave no partial output, and leave its input byte for byte as it was.

Outside the default suite: it runs only when COSTING_SOAK is set, to a count (COSTING_SOAK=50)
or to anything else for 1000. COSTING_SOAK_SEED changes the seed (default 17). A failure names
the mutation's seed and what was done, so it can be replayed with `_mutate(random.Random(seed))`.
The mutations are the kind of damage seen in real files (common practice, no source): odd values
in cells, rows deleted or doubled, parts lost, bytes flipped, files cut short."""

from __future__ import annotations

import contextlib
import hashlib
import io
import os
import random
import re
import time
import zipfile

import pytest

EXAMPLE = os.path.join(os.path.dirname(os.path.dirname(__file__)), "examples", "hollowmere-week.xlsx")

_soak = os.environ.get("COSTING_SOAK", "")
pytestmark = [pytest.mark.soak,
              pytest.mark.skipif(not _soak, reason="soak test: set COSTING_SOAK=N to run N mutations")]

NUMBERS = ["NaN", "INF", "-inf", "1e309", "1E+400", "-1", "0", "-0", "", "abc", "1" + "0" * 30,
           "0.000001", "123456789012", "2.5", "1e-300"]
TEXTS = ["", " ", "D01 ", " d01", "x" * 300, "=1+1", "#REF!", "#DIV/0!", "yes", "no", "maybe",
         "road", "rail", "teleport", "cost", "ÆØÅ 🚚", "1,5", "12 t", "\t", "TRUE", "none"]


def _parts() -> list[tuple[str, bytes]]:
    with zipfile.ZipFile(EXAMPLE) as z:
        return [(i.filename, z.read(i.filename)) for i in z.infolist()]


def _zip(parts: list[tuple[str, bytes]]) -> bytes:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts:
            z.writestr(name, data)
    return buf.getvalue()


def _pick_part(rng, parts, pattern: str) -> int:
    idx = [i for i, (n, _d) in enumerate(parts) if re.fullmatch(pattern, n)]
    return rng.choice(idx)


def _sub_one(rng, data: bytes, pattern: bytes, make) -> bytes:
    hits = list(re.finditer(pattern, data, re.S))
    if not hits:
        return data
    m = rng.choice(hits)
    return data[:m.start()] + make(m) + data[m.end():]


def _mutate(rng: random.Random) -> tuple[bytes, list[str]]:
    """(file bytes, what was done) for one mutation of the example."""
    parts = _parts()
    done: list[str] = []
    for _ in range(rng.choice((1, 1, 2, 3))):
        op = rng.choice(("number", "number", "text", "text", "row_drop", "row_copy", "part_drop",
                         "part_cut", "sheet_rename", "cell_drop"))
        if op == "number":
            i = _pick_part(rng, parts, r"xl/worksheets/sheet\d+\.xml")
            v = rng.choice(NUMBERS)
            parts[i] = (parts[i][0], _sub_one(rng, parts[i][1], rb"<v>[^<]*</v>",
                                              lambda m, v=v: b"<v>" + v.encode() + b"</v>"))
            done.append(f"{op} {parts[i][0]} -> {v!r}")
        elif op == "text":
            i = _pick_part(rng, parts, r"xl/sharedStrings\.xml")
            v = rng.choice(TEXTS)
            esc = v.replace("&", "&amp;").replace("<", "&lt;").encode()
            parts[i] = (parts[i][0], _sub_one(rng, parts[i][1], rb"<t(?: [^>]*)?>[^<]*</t>",
                                              lambda m, esc=esc: b'<t xml:space="preserve">' + esc + b"</t>"))
            done.append(f"{op} -> {v!r}")
        elif op in ("row_drop", "row_copy"):
            i = _pick_part(rng, parts, r"xl/worksheets/sheet\d+\.xml")
            parts[i] = (parts[i][0], _sub_one(rng, parts[i][1], rb"<row [^>]*>.*?</row>",
                                              (lambda m: b"") if op == "row_drop" else
                                              (lambda m: m.group(0) * 2)))
            done.append(f"{op} {parts[i][0]}")
        elif op == "cell_drop":
            i = _pick_part(rng, parts, r"xl/worksheets/sheet\d+\.xml")
            parts[i] = (parts[i][0], _sub_one(rng, parts[i][1], rb"<c [^>]*>.*?</c>", lambda m: b""))
            done.append(f"{op} {parts[i][0]}")
        elif op == "part_drop":
            i = rng.randrange(len(parts))
            done.append(f"{op} {parts[i][0]}")
            del parts[i]
        elif op == "part_cut":
            i = rng.randrange(len(parts))
            parts[i] = (parts[i][0], parts[i][1][: rng.randrange(len(parts[i][1]) + 1)])
            done.append(f"{op} {parts[i][0]}")
        elif op == "sheet_rename":
            i = _pick_part(rng, parts, r"xl/workbook\.xml")
            new = rng.choice(("Lanez", "shipments", "Sheet1", "Rates ", "Depots (2)", ""))
            parts[i] = (parts[i][0], _sub_one(rng, parts[i][1], rb'<sheet name="[^"]*"',
                                              lambda m, new=new: b'<sheet name="' + new.encode() + b'"'))
            done.append(f"{op} -> {new!r}")
    data = _zip(parts)
    r = rng.random()
    if r < 0.08:  # bytes flipped in the packed file
        b = bytearray(data)
        for _ in range(rng.randint(1, 20)):
            b[rng.randrange(len(b))] ^= rng.randint(1, 255)
        data = bytes(b)
        done.append("bytes flipped")
    elif r < 0.12:
        data = data[: rng.randrange(len(data))]
        done.append("file cut short")
    return data, done


def _call(argv: list[str]) -> tuple[int, str]:
    from costing.cli import main

    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            code = main(argv)
        except SystemExit as e:
            code = e.code
    return code, out.getvalue() + err.getvalue()


def test_soak_mutated_workbooks(tmp_path):
    n = int(_soak) if _soak.isdigit() else 1000
    seed = int(os.environ.get("COSTING_SOAK_SEED", "17"))
    folder = tmp_path / "out"
    folder.mkdir()
    failures: list[str] = []
    outcomes = {"check ok": 0, "check refused": 0, "run ok": 0, "run refused": 0}
    t0 = time.perf_counter()
    for k in range(n):
        case_seed = seed * 1_000_003 + k
        data, done = _mutate(random.Random(case_seed))
        inp = tmp_path / f"m{k % 2}.xlsx"
        inp.write_bytes(data)
        digest = hashlib.sha256(data).hexdigest()
        out = folder / "costed.xlsx"
        for argv in (["check", str(inp)], ["run", str(inp), "-o", str(out), "--overwrite", "--quiet"]):
            try:
                code, text = _call(argv)
            except BaseException as e:  # a traceback: anything main() lets escape
                failures.append(f"seed {case_seed} {done}: {argv[0]} raised {type(e).__name__}: {e}")
                continue
            if code not in (0, 1) or "Traceback" in text:
                failures.append(f"seed {case_seed} {done}: {argv[0]} exit {code}: {text[-300:]}")
            outcomes[f"{argv[0]} {'ok' if code == 0 else 'refused'}"] += 1
            if argv[0] == "run" and code != 0 and out.exists():
                failures.append(f"seed {case_seed} {done}: refused run left {out.name}")
        leftovers = [f for f in os.listdir(folder) if f != "costed.xlsx"]
        if leftovers:
            failures.append(f"seed {case_seed} {done}: partial files {leftovers}")
            for f in leftovers:
                os.unlink(folder / f)
        if out.exists():
            out.unlink()
        if hashlib.sha256(inp.read_bytes()).hexdigest() != digest:
            failures.append(f"seed {case_seed} {done}: the input was changed")
    seconds = time.perf_counter() - t0
    print(f"\nsoak: {n} mutated workbooks in {seconds:.0f} s; {outcomes}; {len(failures)} failure(s)")
    assert not failures, "\n".join(failures[:20])
