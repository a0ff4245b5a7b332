"""Recalculate a workbook in LibreOffice Calc, headless, with a throwaway profile that tells it
to recalculate on load (recipe measured in shared/spreadsheet-notes.md, section 1)."""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile

PROFILE_XCU = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry"
 xmlns:xs="http://www.w3.org/2001/XMLSchema" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load">
<prop oor:name="OOXMLRecalcMode" oor:op="fuse"><value>0</value></prop></item>
</oor:items>
"""


def soffice() -> str | None:
    return shutil.which("soffice") or shutil.which("libreoffice")


def convert(path: str, outdir: str, fmt: str = "xlsx", timeout: int = 180) -> str:
    """Open `path` in LibreOffice (recalculating every formula) and save it as `fmt` in
    `outdir`. Returns the new file's path; raises if LibreOffice did not write it (it exits 0
    even on failure)."""
    exe = soffice()
    if exe is None:
        raise FileNotFoundError("LibreOffice (soffice) is not installed")
    with tempfile.TemporaryDirectory() as profile:
        os.makedirs(os.path.join(profile, "user"))
        with open(os.path.join(profile, "user", "registrymodifications.xcu"), "w") as f:
            f.write(PROFILE_XCU)
        subprocess.run([exe, f"-env:UserInstallation=file://{profile}", "--headless", "--norestore",
                        "--convert-to", fmt, "--outdir", outdir, path],
                       check=False, capture_output=True, timeout=timeout)
    out = os.path.join(outdir, os.path.splitext(os.path.basename(path))[0] + "." + fmt)
    if not os.path.exists(out):
        raise RuntimeError(f"LibreOffice did not write {out}")
    return out


def recalc_mismatches(path: str, workdir: str, tolerance: float = 0.005):
    """Recalculate `path` in LibreOffice and compare every formula cell's recalculated value with
    the value cached in the file. Returns (formulas checked, [(sheet, cell, formula, ours,
    theirs), ...] for those that differ by more than `tolerance`)."""
    import openpyxl

    recalculated = convert(path, workdir)
    formulas = openpyxl.load_workbook(path)
    cached = openpyxl.load_workbook(path, data_only=True)
    fresh = openpyxl.load_workbook(recalculated, data_only=True)
    checked, mismatches = 0, []
    for ws in formulas:
        for row in ws.iter_rows():
            for cell in row:
                if cell.data_type != "f":
                    continue
                ours = cached[ws.title][cell.coordinate].value
                theirs = fresh[ws.title][cell.coordinate].value
                checked += 1
                if not isinstance(theirs, (int, float)) or abs(ours - theirs) > tolerance:
                    mismatches.append((ws.title, cell.coordinate, cell.value, ours, theirs))
    return checked, mismatches
