"""The Problems sheet: every finding of the check and routing stages, with sheet, cell and fix."""

from __future__ import annotations

from costing.model import ERROR, INFO, WARNING, Problem
from costing.sheets.formats import Writer, cell_text


def write_problems(w: Writer, ws, problems: list[Problem]) -> None:
    """One row per problem: severity, sheet, cell, message and fix, errors first as found."""
    cols = [("severity", 10, "text"), ("sheet", 12, "text"), ("cell", 10, "text"),
            ("message", 80, "text"), ("what_to_do", 60, "text")]
    w.header(ws, cols)
    order = {ERROR: 0, WARNING: 1, INFO: 2}
    seen: set = set()  # one finding once: validation and routing may both report it
    unique = []
    for p in problems:
        if (p.severity, p.sheet, p.cell, p.message) not in seen:
            seen.add((p.severity, p.sheet, p.cell, p.message))
            unique.append(p)
    problems = unique
    for r, p in enumerate(sorted(problems, key=lambda p: order.get(p.severity, 3)), start=1):
        fmt = w.f.get(p.severity)
        ws.write_string(r, 0, p.severity, fmt)
        ws.write_string(r, 1, cell_text(p.sheet))
        ws.write_string(r, 2, cell_text(p.cell))
        ws.write_string(r, 3, cell_text(p.message))
        ws.write_string(r, 4, cell_text(p.fix))
    if not problems:
        ws.write_string(1, 3, "No problems found.")
    ws.autofilter(0, 0, max(len(problems), 1), len(cols) - 1)
