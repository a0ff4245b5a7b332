"""How long LibreOffice Calc takes to recalculate a costed workbook: the same headless load and
save run twice in the same process, once told to recalculate every formula on load and once
told never to, so that the difference is the recalculation (loading and saving cancel out).

    python -m benchmarks.bench_recalc COSTED.xlsx [COSTED2.xlsx ...]
    python -m benchmarks.bench_recalc --week          # cost the week of bench_week first
    python -m benchmarks.bench_recalc --week --smoke  # a small week

LibreOffice's setting is Calc's "recalculation on file load" for Excel 2007 and newer files
(registry key org.openoffice.Office.Calc/Formula/Load/OOXMLRecalcMode: 0 always, 1 never), set in
a throwaway profile (recipe in shared/spreadsheet-notes.md). Prints seconds; asserts nothing.
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


def measure(path: str) -> dict:
    """Seconds with and without recalculation (each the best of two runs) and the difference."""
    convert_seconds(path, False)  # a first start warms LibreOffice's own files
    never = min(convert_seconds(path, False) for _ in range(2))
    always = min(convert_seconds(path, True) for _ in range(2))
    return {"file": os.path.basename(path), "load and save s": never, "with recalculation s": always,
            "recalculation s": max(0.0, always - never)}


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
            print(f"{row['file']}: load and save {row['load and save s']:.1f} s, with every formula "
                  f"recalculated {row['with recalculation s']:.1f} s: recalculation about "
                  f"{row['recalculation s']:.1f} s")
    return rows


if __name__ == "__main__":
    main()
