"""The worksheet files of a costed workbook, assembled in two processes when it closes.

When an xlsxwriter workbook closes, each worksheet's XML is assembled from the rows it holds
(in memory, or in its streamed temporary file) into a temporary file, one worksheet after the
other, and the files are then zipped. On a large week most of that is the Legs sheet (1.7 s of
2.8 s on the week of `benchmarks.bench_week`). `install` makes the workbook assemble the
heaviest worksheets in a second process (`costing.aside`) while this one assembles the rest;
the zip then takes the same files in the same order.

Why the files are the same:

- a worksheet's XML depends only on that worksheet and on what the workbook settled before the
  worksheet files are written (shared strings are numbered as cells are written; formats,
  drawings, names and tables are prepared first), so it is the same whichever process writes it;
- assembling a worksheet changes it only in ways its own XML reflects (relationship counters,
  selections), except that external hyperlinks are collected for its relationships file, which
  is written later by this process: a worksheet with hyperlinks is never given to the child;
- streamed worksheets (constant memory) are not split: their rows are on disk already and
  assembling them is a copy;
- when the child gives no answer, this process assembles its worksheets itself
  (`costing.aside`: the same call, here), rewriting their files from the start.

Worksheets are dealt heaviest first (by cells held), each to whichever process has the fewer
cells so far (a worksheet the child may not take stays here); below ASIDE_CELLS cells in all
nothing is split.
"""

from __future__ import annotations

from collections.abc import Sequence

ASIDE_CELLS = 500_000  # below this many cells, forking costs more than it saves


def install(wb) -> None:
    """Make `wb` (an xlsxwriter Workbook) assemble its worksheet files in two processes when
    that pays (module docstring), from its next close."""
    get_packager = wb._get_packager

    def packager():
        p = get_packager()
        p._write_worksheet_files = lambda: write_worksheet_files(p)
        return p

    wb._get_packager = packager


def write_worksheet_files(packager) -> None:
    """xlsxwriter's ``Packager._write_worksheet_files``, with the heaviest worksheets assembled in
    a second process when forking is available (`costing.aside`)."""
    from costing import aside

    files = []
    index = 1
    for ws in packager.workbook.worksheets():
        if ws.is_chartsheet:
            continue
        if ws.constant_memory:
            ws._opt_reopen()
            ws._write_single_row()
        files.append((ws, packager._filename(f"xl/worksheets/sheet{index}.xml")))
        index += 1
    away = [] if packager.in_memory else split(files)
    kept = [f for f in files if f not in away]
    with aside.start(assemble, away, fork=bool(away)) as job:
        assemble(kept)
        job.result()


def split(files: Sequence[tuple]) -> list[tuple]:
    """The (worksheet, file) pairs the child assembles: module docstring."""
    weights = [(cells(ws), k) for k, (ws, _f) in enumerate(files)]
    total = sum(w for w, _k in weights)
    if total < ASIDE_CELLS:
        return []
    child = here = 0
    away = []
    for w, k in sorted(weights, key=lambda x: (-x[0], x[1])):
        ws = files[k][0]
        if child <= here and eligible(ws):
            child += w
            away.append(files[k])
        else:
            here += w
    return away


def eligible(ws) -> bool:
    """Whether the child may assemble `ws`: held in memory, without hyperlinks, and every format
    it uses holding its style index already (`indexed`)."""
    return not ws.constant_memory and not ws.hyperlinks and indexed(ws)


def indexed(ws) -> bool:
    """Whether every format `ws` refers to (columns, rows, cells, the columns of its row blocks)
    has its style number already, so that assembling `ws` numbers no new style: xlsxwriter numbers
    a format's style when first asked (a format equal to one numbered takes its number, and
    nothing is recorded), and a number first asked for in the child would never reach the styles
    this process writes (`costing.sheets.formats` asks as cells are written)."""
    fmts = {info.column_format for info in ws.col_info.values()}
    fmts |= {info.row_format for info in ws.row_info.values()}
    fmts |= {getattr(cell, "format", None) for row in ws.table.values() for cell in row.values()}
    for block in getattr(ws, "_costing_blocks", ()):
        shapes = {id(shape): shape for _r, shape, _v, _rr in block.rows}
        fmts |= {c.fmt for shape in shapes.values() for c in shape.columns}
    fmts.discard(None)
    return all(f.xf_index is not None or f._get_format_key() in f.xf_format_indices for f in fmts)


def cells(ws) -> int:
    """The cells `ws` holds: xlsxwriter's cell table and the rows of its row blocks
    (costing.sheets.rowxml)."""
    n = sum(len(row) for row in ws.table.values())
    for block in getattr(ws, "_costing_blocks", ()):
        n += sum(len(shape.columns) for _r, shape, _v, _rr in block.rows)
    return n


def assemble(files: Sequence[tuple]) -> bool:
    """Write each worksheet's XML to its file (xlsxwriter's own assembly); True when done."""
    for ws, filename in files:
        ws._set_xml_writer(filename)
        ws._assemble_xml_file()
    return True
