"""How long LibreOffice Calc takes to recalculate every formula of a costed workbook.

    python -m benchmarks.bench_recalc COSTED.xlsx [COSTED2.xlsx ...]
    python -m benchmarks.bench_recalc --week          # cost the week of bench_week first
    python -m benchmarks.bench_recalc --week --smoke  # a small week

With LibreOffice's UNO bridge (python3-uno, run by the system Python) the workbook is loaded
without recalculating and Calc's own full recalculation (calculateAll) is timed, best of three;
then each sheet's formulas alone (set again with automatic calculation off, so only they are
dirty; Calc's calculate timed), for sheets of at most 500,000 cells (the Legs sheets are larger:
reading and setting their formulas through the bridge takes far longer than recalculating them).
Without it, the difference of two headless conversions is taken: Calc's "recalculation on file
load" for Excel 2007 and newer files (registry key org.openoffice.Office.Calc/Formula/Load/
OOXMLRecalcMode: 0 always, 1 never), set in a throwaway profile. Prints seconds; asserts nothing.
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import tempfile
import time

PROFILE = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry"
 xmlns:xs="http://www.w3.org/2001/XMLSchema" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load">
<prop oor:name="OOXMLRecalcMode" oor:op="fuse"><value>{mode}</value></prop></item>
</oor:items>
"""


def convert_seconds(path: str, recalc: bool, timeout: int = 3600) -> float:
    """Wall seconds of a headless LibreOffice load and save of `path` (as xlsx), recalculating
    every formula on load or none."""
    exe = shutil.which("soffice") or shutil.which("libreoffice")
    if exe is None:
        raise SystemExit("LibreOffice (soffice) is not installed")
    with tempfile.TemporaryDirectory() as profile, tempfile.TemporaryDirectory() as outdir:
        os.makedirs(os.path.join(profile, "user"))
        with open(os.path.join(profile, "user", "registrymodifications.xcu"), "w") as f:
            f.write(PROFILE.format(mode=0 if recalc else 1))
        t0 = time.perf_counter()
        subprocess.run([exe, f"-env:UserInstallation=file://{profile}", "--headless", "--norestore",
                        "--convert-to", "xlsx", "--outdir", outdir, path],
                       check=False, capture_output=True, timeout=timeout)
        seconds = time.perf_counter() - t0
        if not os.listdir(outdir):
            raise SystemExit(f"LibreOffice did not convert {path}")
    return seconds


# Run by the system Python, which has LibreOffice's UNO bridge (python3-uno): load the workbook
# without recalculating, then time Calc's own "recalculate everything" (calculateAll).
UNO_SCRIPT = r"""
import os, subprocess, sys, time
import uno
from com.sun.star.beans import PropertyValue
exe, profile, path, port = sys.argv[1:5]
MAX_CELLS = 500000  # a sheet larger than this (Legs) is not timed alone
proc = subprocess.Popen([exe, "-env:UserInstallation=file://" + profile, "--headless", "--norestore",
                         "--accept=socket,host=127.0.0.1,port=%s;urp;" % port],
                        stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
try:
    local = uno.getComponentContext()
    resolver = local.ServiceManager.createInstanceWithContext("com.sun.star.bridge.UnoUrlResolver", local)
    for _ in range(120):
        try:
            ctx = resolver.resolve("uno:socket,host=127.0.0.1,port=%s;urp;StarOffice.ComponentContext" % port)
            break
        except Exception:
            time.sleep(0.5)
    desktop = ctx.ServiceManager.createInstanceWithContext("com.sun.star.frame.Desktop", ctx)
    t0 = time.perf_counter()
    doc = desktop.loadComponentFromURL(uno.systemPathToFileUrl(os.path.abspath(path)), "_blank", 0,
                                       (PropertyValue(Name="Hidden", Value=True),))
    load = time.perf_counter() - t0
    runs = []
    for _ in range(3):
        t0 = time.perf_counter()
        doc.calculateAll()
        runs.append(time.perf_counter() - t0)
    # each sheet on its own: its formulas set again with automatic calculation off (so they are
    # dirty, and nothing else is), then Calc's calculate() recalculates the dirty cells alone
    from com.sun.star.sheet.CellFlags import FORMULA
    doc.enableAutomaticCalculation(False)
    sheets = []
    for name in doc.Sheets.ElementNames:
        sheet = doc.Sheets.getByName(name)
        cursor = sheet.createCursor()
        cursor.gotoEndOfUsedArea(False)
        end = cursor.RangeAddress
        if end.EndRow == 0 and end.EndColumn == 0:
            continue
        if (end.EndRow + 1) * (end.EndColumn + 1) > MAX_CELLS:  # too large to reset through UNO
            sheets.append("%s\t-1\t-1" % name)
            continue
        cells = sheet.getCellRangeByPosition(0, 0, end.EndColumn, end.EndRow)
        count = 0
        ranges = cells.queryContentCells(FORMULA)
        for addr in ranges.RangeAddresses:
            count += (addr.EndRow - addr.StartRow + 1) * (addr.EndColumn - addr.StartColumn + 1)
        if not count:
            continue
        cells.setFormulaArray(cells.getFormulaArray())
        t0 = time.perf_counter()
        doc.calculate()
        sheets.append("%s\t%d\t%r" % (name, count, time.perf_counter() - t0))
    doc.close(True)
    print(load, min(runs))
    for line in sheets:
        print(line)
finally:
    proc.terminate()
"""


def uno_seconds(path: str, port: int = 2317) -> tuple[float, float, list] | None:
    """(load seconds, best of three full recalculations in seconds, per sheet with formulas:
    (name, formula cells, seconds to recalculate that sheet's formulas alone)) in LibreOffice
    Calc through its UNO bridge (the system Python's python3-uno), or None when that bridge is
    missing. A sheet alone: its formulas are set again with automatic calculation off, which
    makes them (and nothing else) dirty, and Calc's ``calculate`` is timed, once."""
    exe = shutil.which("soffice") or shutil.which("libreoffice")
    python = shutil.which("python3", path="/usr/bin") or "python3"
    if exe is None or subprocess.run([python, "-c", "import uno"], capture_output=True).returncode:
        return None
    with tempfile.TemporaryDirectory() as profile:
        os.makedirs(os.path.join(profile, "user"))
        with open(os.path.join(profile, "user", "registrymodifications.xcu"), "w") as f:
            f.write(PROFILE.format(mode=1))  # never recalculate on load: calculateAll is timed alone
        out = subprocess.run([python, "-c", UNO_SCRIPT, exe, profile, path, str(port)],
                             capture_output=True, text=True, timeout=3600)
    lines = out.stdout.splitlines()
    try:
        load, calc = (float(x) for x in lines[0].split())
        sheets = [(name, int(n), float(secs)) for name, n, secs in (x.split("\t") for x in lines[1:])]
    except (ValueError, IndexError):
        raise SystemExit(f"LibreOffice did not load {path}: {out.stderr[-500:]}") from None
    return load, calc, sheets


def measure(path: str) -> dict:
    """Calc's own full recalculation timed through UNO when the bridge is there; else the
    difference between a headless load and save with and without recalculation (best of two)."""
    timed = uno_seconds(path)
    if timed is not None:
        return {"file": os.path.basename(path), "how": "calculateAll through UNO, best of 3",
                "load s": timed[0], "recalculation s": timed[1], "sheets": timed[2]}
    convert_seconds(path, False)  # a first start warms LibreOffice's own files
    never = min(convert_seconds(path, False) for _ in range(2))
    always = min(convert_seconds(path, True) for _ in range(2))
    return {"file": os.path.basename(path), "how": "load and save with and without recalculation",
            "load s": never, "recalculation s": max(0.0, always - never)}


def main(argv=None) -> list[dict]:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("paths", nargs="*")
    p.add_argument("--week", action="store_true", help="cost the week of benchmarks.bench_week first")
    p.add_argument("--smoke", action="store_true", help="with --week: 200 depots, 200 shipments")
    args = p.parse_args(argv)
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        paths = list(args.paths)
        if args.week:
            from benchmarks.bench_week import costed_run
            from benchmarks.bench_workbook import make_input

            depots, lanes, shipments, origins = (200, 400, 200, 10) if args.smoke else (1000, 2000, 5000, 40)
            inp = os.path.join(tmp, "week-input.xlsx")
            make_input(inp, depots, lanes, shipments, origins, settings={})
            out = os.path.join(tmp, "week-costed.xlsx")
            costed_run(inp, out)
            paths.append(out)
        for path in paths:
            row = measure(path)
            rows.append(row)
            print(f"{row['file']}: load {row['load s']:.1f} s; every formula recalculated in "
                  f"{row['recalculation s']:.2f} s ({row['how']})")
            if row.get("sheets"):
                print("\n| sheet | formula cells | its formulas alone, s |\n|---|---:|---:|")
                for name, n, secs in row["sheets"]:
                    if n < 0:
                        print(f"| {name} | (over 500,000 cells) | not timed alone |")
                    else:
                        print(f"| {name} | {n:,} | {secs:.3f} |")
    return rows


if __name__ == "__main__":
    main()
