"""Many rows of one shape written as worksheet XML directly, instead of cell by cell through
xlsxwriter's write methods: the large sheets' fast path (Legs, Scenario legs).

A sheet module describes a row shape once (`Shape`: per column its kind, number format and, for
a formula, a template naming the row as ``{r}`` and a second row, such as the vehicle run's, as
``{rr}``) and then adds rows of values (`RowBlock.add`). The block writes the same XML elements
xlsxwriter's worksheet writes for the same calls, with the same escaping, shared strings (or
inline strings in streaming mode), number text and style lookup:

* a number cell ``<c r="B2" s="x"><v>{value:.16G}</v></c>`` (no cell written for None);
* a text cell as a shared string index (``t="s"``), or streamed as an inline string with
  control characters escaped and spaces kept, as xlsxwriter does in constant_memory mode;
* a formula cell ``<c r="K2" s="x"><f>formula</f><v>value</v></c>`` with the cached value as
  text (``t="str"`` for a text value);
* the style ``s`` of a cell with no format of its own from the row's format, else the column's
  (`set_column`), read when the row's XML is made.

Where the rows go. Normal mode: the values are kept (one tuple per row, far smaller than
xlsxwriter's cell table) and the XML is made when the workbook closes, inside the worksheet's
own row writer, so row heights and column formats set late (the layout pass) apply as they do to
cells written by xlsxwriter. Streaming mode (xlsxwriter's constant_memory): each row's XML goes
to the worksheet's row file as it is added, after xlsxwriter's own pending row, so rows stay in
order, as xlsxwriter does itself in that mode. One difference: xlsxwriter keeps a sheet's last
row pending until the workbook closes, so that row alone gets the column formats the layout sets
at close (the wrap of a long-text column); a block writes its last row like the others.
And a block's cells are not in xlsxwriter's cell table, so a chart over them would get no cached
points: sheets that a chart reads (Trade-offs, Lane usage, Charts) are written through xlsxwriter.

What the block requires, and checks: its rows are added in increasing row order, below every row
written through xlsxwriter on that worksheet so far (the header); rows written through xlsxwriter
afterwards go below the block's last row (a total row). `RowBlock.add` raises ValueError on a
row out of order; the worksheet's own write methods are not watched, a rule the sheet modules
keep. At close, xlsxwriter's rows above, between and below the blocks and the blocks' rows are
written in row order.

Widths. The layout pass (`costing.sheets.formats.install_layout`) measures every cell written
through xlsxwriter. The block measures its own cells and reports to it, on `finish`, the values
that decide each column's width: for a number format with fixed decimals the shown length only
grows with the absolute value (plus one for a minus sign), so the largest positive and the
largest negative value of a column are measured; for General or optional decimals every
distinct value; for text the longest line, and every text over 40 characters as it is (the
layout's long-text and caption rules look at those). The widths are therefore the ones the
cell-by-cell path gives (tested).

Shared formulas. A formula column marked ``shared`` (its template names only its own row's cells
and absolute references) is written as OOXML shared formulas (ECMA-376 Part 1, 18.3.1.40, the
``f`` element with ``t="shared"``): over a group of up to SHARED_ROWS rows next to each other
whose shapes have the same shared templates, the first row's cell holds the formula with the
group's range (``ref``) and an id (``si``, unique on the worksheet), the other rows' cells only
the id; a reader shifts the first row's relative references by the row offset, which gives each
row exactly its own template's formula, because the template refers to nothing else. Every cell
keeps its cached value. The rows of a group are held until the group ends (a gap, another share
key, a row with a format of its own, SHARED_ROWS rows or `finish`), in streaming mode too, so a
streamed block's last rows reach the file at `finish`: rows below it through xlsxwriter come
after that call. Tested through openpyxl's translation of shared formulas and a LibreOffice
recalculation (tests/test_rowxml.py, tests/test_recalc_libreoffice.py). Measured on a week of
12,493 legs: the Legs XML 11 % smaller, and LibreOffice loads the workbook in 2.1 s instead of
4.1 s and recalculates it in 0.26 s instead of 0.49 s (it reads a group's formula once).

How a row's XML is made. Once per shape, the cells' XML pieces (tag, cell reference, style,
formula template) are put into one generated function of (row number, values, rr) that returns
the row as one string: a row costs no loop over its columns (`_compile`). It gives the XML of
the cell-by-cell method `RowBlock._xml_cells` for every kind of value (tested), which remains
the path of a row that has a format of its own.

The equivalence with xlsxwriter's own cells is tested by writing the same sheet both ways and
comparing every cell read back with openpyxl (value, formula, number format, style), and by a
LibreOffice recalculation of the fast path's formulas (tests/test_rowxml.py).
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass

from xlsxwriter.utility import xl_col_to_name
from xlsxwriter.worksheet import _preserve_whitespace

from costing.sheets.formats import _MEASURED_ROWS, _parse_number_format

TEXT, NUMBER, FORMULA = "text", "number", "formula"
DATE = "date"  # a number (a date's serial) that the layout does not measure, as xlsxwriter's dates
PLAIN, MASTER, FOLLOW = "plain", "master", "follow"  # how a row writes its shared formulas

# Rows of one shared formula group at most: the group's rows are held until it is written (in
# streaming mode too), and a group ends at this many rows.
SHARED_ROWS = 1024

# The large sheets write their rows through this module; False: cell by cell through xlsxwriter
# (the reference the fast path is tested against, tests/test_rowxml.py).
FAST_ROWS = True
_ERROR_CODES = ("#DIV/0!", "#N/A", "#NAME?", "#NULL!", "#NUM!", "#REF!", "#VALUE!")


# A text that xlsxwriter's inline-string writing leaves as it is has none of these: a control
# character, U+FFFE or U+FFFF, a literal ``_xHHHH_`` escape, a leading or trailing white space
# (kept with xml:space), an XML special character.
_PLAIN = re.compile("[\x00-\x08\x0b-\x1f\ufffe\uffff&<>]|_x[0-9a-fA-F]{4}_|^\\s|\\s$")
_TEXTS_KEPT = 4096


def _escape(data: str) -> str:
    """XML text of element data, as xlsxwriter escapes it (quotes are left)."""
    if "&" in data or "<" in data or ">" in data:
        return data.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    return data


@dataclass(frozen=True)
class Column:
    """One column of a row shape.

    Parameters
    ----------
    col : int
        Zero-based column index.
    kind : str
        ``text``, ``number``, ``date`` (a number not measured for the width, as xlsxwriter's
        dates are not) or ``formula``.
    fmt : xlsxwriter Format or None
        The cell's own format (None: the row's or the column's, as xlsxwriter does).
    template : str or None
        For a formula: its text without ``=``, naming this row's number as ``{r}`` and another
        row's (e.g. a vehicle run's) as ``{rr}``; braces of the formula itself doubled. None:
        each row's value is the pair (formula text without ``=``, cached value).
    shared : bool
        The template refers to cells of its own row (``{r}``) and to absolute references only,
        never to ``{rr}``: the same formula filled down, which rows next to each other may
        write as one shared formula (see the module docstring). The sheet module vouches for it.
    """

    col: int
    kind: str
    fmt: object = None
    template: str | None = None
    shared: bool = False


class Shape:
    """The columns of one kind of row (the same cells, formats and formula templates)."""

    def __init__(self, columns: Sequence[Column]):
        self.columns = tuple(columns)
        self.letters = tuple(xl_col_to_name(c.col) for c in self.columns)
        # formula templates escaped once for XML (row numbers add nothing to escape)
        self.formulas = tuple(_escape(c.template) if c.template is not None else None
                              for c in self.columns)
        self.texts = tuple(i for i, c in enumerate(self.columns) if c.kind == TEXT)
        self.numbers = tuple(i for i, c in enumerate(self.columns) if c.kind == NUMBER)
        self.dates = tuple(i for i, c in enumerate(self.columns) if c.kind == DATE)
        for c in self.columns:
            if c.shared and (c.kind != FORMULA or c.template is None or "{rr}" in c.template):
                raise ValueError(f"column {c.col}: only a formula template without {{rr}} is shared")
        # rows whose shapes have the same key may be one shared group (`RowBlock._group`)
        self.share_key = tuple((c.col, c.template) for c in self.columns if c.shared) or None


class _Measure:
    """What decides one column's width, for one format: see the module docstring."""

    __slots__ = ("fmt", "monotone", "pos", "pos_row", "neg", "neg_row", "seen", "text", "text_row", "text_n")

    def __init__(self, fmt, nf):
        self.fmt = fmt
        parsed = _parse_number_format(nf)
        self.monotone = parsed is not None and parsed[1] == 0
        self.pos = self.neg = None
        self.pos_row = self.neg_row = 0
        self.seen: dict = {}
        self.text: str | None = None
        self.text_row = 0
        self.text_n = 0  # _line(text): its longest line


class RowBlock:
    """Rows added to one worksheet as XML (module docstring: what it writes, and when).

    Parameters
    ----------
    ws : xlsxwriter Worksheet
        Of a workbook made by `costing.sheets.formats.Writer` (its layout is measured).
    first_row : int
        Zero-based row of the block's first row, below every row written through xlsxwriter.
    """

    def __init__(self, ws, first_row: int):
        self.ws = ws
        self.first = first_row
        self.next = first_row
        self.last_col = -1
        self.streaming = bool(ws.constant_memory)
        self.lay = getattr(ws, "_costing_layout", None)  # the layout measuring this worksheet
        self.rows: list[tuple] = []  # normal mode: (row, shape, values, rr)
        self.measures: dict[tuple[int, int], _Measure] = {}
        self.counted: dict[int, int] = {}  # rows < _MEASURED_ROWS -> cells (layout's caption rule)
        self._styles: dict[int, str] = {}
        self._plans: dict[int, list] = {}  # id(shape) -> its cells' XML pieces (`_plan`)
        self._measure_plans: dict[int, list] = {}  # id(shape) -> its measured cells (`_measure_plan`)
        self._measurers: dict[int, object] = {}  # id(shape) -> its compiled measure (`_compile_measure`)
        self._compiled: dict[tuple, object] = {}  # (id(shape), share) -> its row writer (`_compile`)
        self._texts: dict[str, str] = {}  # streamed text -> its cell's end (`_text`)
        self._group: list[tuple] = []  # rows that may share their formulas, not yet written (`_take`)
        if self.streaming:
            if first_row <= ws.previous_row and ws.table:
                raise ValueError("a row block starts below the rows written through xlsxwriter")
            ws._write_single_row(first_row)  # xlsxwriter's pending row (the header) goes first
        else:
            blocks = getattr(ws, "_costing_blocks", None)
            if blocks is None:
                blocks = ws._costing_blocks = []
                _install(ws)
            blocks.append(self)

    # -- public --
    def add(self, row: int, shape: Shape, values: Sequence, rr: int = 0) -> None:
        """Add row `row` (zero-based) of `shape` with one value per column (None: no cell for a
        number; a formula's value is its cached result); `rr` fills ``{rr}`` of the templates
        (1-based row number)."""
        if row < self.next:
            raise ValueError(f"row {row + 1} added after row {self.next}: rows go in increasing order")
        self.next = row + 1
        self._measure(row, shape, values)
        if self.streaming:
            self._take(row, shape, values, rr, self._out_streamed)
        else:  # texts take their shared-string index now, in cell order, as xlsxwriter's do
            index = self.ws.str_table._get_shared_string_index
            values = list(values)
            for i in shape.texts:
                v = values[i]
                values[i] = index("" if v is None else v)
            self.rows.append((row, shape, tuple(values), rr))

    def finish(self) -> None:
        """Record the block's extent in the worksheet's dimensions (for the dimension element,
        filters and the print area) and report its widths to the layout."""
        ws = self.ws
        if self.next == self.first:
            return
        if self.streaming:
            self._flush(self._out_streamed)
        last_row = self.next - 1
        if ws.dim_rowmax is None or last_row > ws.dim_rowmax:
            ws.dim_rowmax = last_row
        if ws.dim_rowmin is None or self.first < ws.dim_rowmin:
            ws.dim_rowmin = self.first
        first_col = min(c for c, _f in self.measures) if self.measures else 0
        if ws.dim_colmin is None or first_col < ws.dim_colmin:
            ws.dim_colmin = first_col
        if ws.dim_colmax is None or self.last_col > ws.dim_colmax:
            ws.dim_colmax = self.last_col
        if self.streaming:
            ws.previous_row = last_row + 1  # xlsxwriter's next row, after ours
        lay = self.lay
        if lay is None:
            return
        counts = dict(lay.row_cells)  # the reports below are not cells: keep the layout's count
        for (col, _k), m in self.measures.items():
            for value, row in ((m.pos, m.pos_row), (m.neg, m.neg_row), *m.seen.items()):
                if value is not None:
                    lay.number(row, col, value, m.fmt)
            if m.text is not None:
                lay.text(m.text_row, col, m.text, m.fmt)
        lay._grow(last_row, self.last_col)
        for r, n in self.counted.items():
            counts[r] = counts.get(r, 0) + n
        lay.row_cells = counts

    # -- private --
    def _measure(self, row: int, shape: Shape, values: Sequence) -> None:
        fn = self._measurers.get(id(shape))
        if fn is None:
            fn = self._measurers[id(shape)] = _compile_measure(self._measure_plan(shape), shape, self)
        fn(row, values)

    def _measure_cells(self, row: int, shape: Shape, values: Sequence) -> None:
        """What `_measure`'s compiled function does, cell by cell (the reference it is tested
        against)."""
        plan = self._measure_plans.get(id(shape))
        if plan is None:
            plan = self._measure_plan(shape)
        cells = 0
        for i, m, text, own_formula in plan:
            v = values[i]
            if v is None and not text:
                continue
            if own_formula:
                v = v[1]
            cells += self._measure_cell(m, row, shape.columns[i].col, v, text)
        if row < _MEASURED_ROWS:
            self.counted[row] = self.counted.get(row, 0) + cells

    def _measure_cell(self, m: _Measure, row: int, col: int, v, text: bool) -> int:
        """Measure one cell's value `v` (a formula's: its cached value); the cells it counts
        for the caption rule (0: the layout counts it itself)."""
        lay = self.lay
        if text or isinstance(v, str):
            s = "" if v is None else v
            n = _line(s)
            if n > 40 and lay is not None:
                lay.text(row, col, s, m.fmt)  # long text and caption rules: as written
                return 0  # counted by the layout itself
            if m.text is None or n > m.text_n:
                m.text, m.text_row, m.text_n = s, row, n
        elif isinstance(v, bool) or not m.monotone:
            if v not in m.seen:
                m.seen[v] = row
        elif v >= 0:
            if m.pos is None or v > m.pos:
                m.pos, m.pos_row = v, row
        elif m.neg is None or v < m.neg:
            m.neg, m.neg_row = v, row
        return 1

    def _measure_plan(self, shape: Shape) -> list[tuple]:
        """Per measured column of `shape` (dates are not measured): (its index in the row's
        values, the _Measure of its column and format, whether it is text, whether it is a
        formula of its own whose value is a (text, cached value) pair); made once per shape."""
        if shape.columns and shape.columns[-1].col > self.last_col:  # dates count for the extent
            self.last_col = shape.columns[-1].col
        plan = []
        for i, c in enumerate(shape.columns):
            if c.fmt is not None:  # indexed as the rows are added, not when the sheet is assembled
                c.fmt._get_xf_index()  # (costing.sheets.assemble)
            if c.kind == DATE:
                continue
            key = (c.col, id(c.fmt))
            m = self.measures.get(key)
            if m is None:
                nf = c.fmt.num_format if c.fmt is not None else self._column_nf(c.col)
                m = self.measures[key] = _Measure(c.fmt, nf)
            plan.append((i, m, c.kind == TEXT, c.kind == FORMULA and c.template is None))
        self._measure_plans[id(shape)] = plan
        return plan

    def _column_nf(self, col: int):
        info = self.ws.col_info.get(col)
        fmt = info.column_format if info is not None else None
        return fmt.num_format if fmt is not None else None

    def _style(self, fmt, row: int, col: int) -> str:
        """The ``s`` attribute xlsxwriter gives a cell: its own format, else the row's, else the
        column's."""
        ws = self.ws
        if fmt is None:
            info = ws.row_info.get(row)
            if info is not None and info.row_format:
                fmt = info.row_format
            else:
                cinfo = ws.col_info.get(col)
                fmt = cinfo.column_format if cinfo is not None else None
                if fmt is None:
                    return ""
        s = self._styles.get(id(fmt))
        if s is None:
            s = self._styles[id(fmt)] = f' s="{fmt._get_xf_index()}"'
        return s

    def _text(self, text: str) -> str:
        """The end of a text cell written inline (streaming mode), after its style: its type
        attribute, the string escaped as xlsxwriter escapes it, the cell's end. A text with
        nothing to escape or keep (`_PLAIN`) skips xlsxwriter's escaping; the last few
        thousand texts are remembered (ids, depots and modes repeat)."""
        done = self._texts.get(text)
        if done is not None:
            return done
        if _PLAIN.search(text) is None:
            done = f' t="inlineStr"><is><t>{text}</t></is></c>'
        else:
            escaped = self.ws._escape_control_characters(text)
            preserve = ' xml:space="preserve"' if _preserve_whitespace(escaped) else ""
            done = f' t="inlineStr"><is><t{preserve}>{_escape(escaped)}</t></is></c>'
        if len(self._texts) >= _TEXTS_KEPT:
            self._texts.clear()
        self._texts[text] = done
        return done

    def _plan(self, shape: Shape, row: int) -> list[tuple]:
        """Per column of `shape`: (kind, the cell's opening up to its row number, the rest of
        its opening tag with the style, formula template); made once per shape (and again
        for a row with a format of its own, whose format fills cells without one)."""
        info = self.ws.row_info.get(row)
        own_row = info is not None and info.row_format
        plan = None if own_row else self._plans.get(id(shape))
        if plan is None:
            plan = [(c.kind, f'<c r="{letter}', f'"{self._style(c.fmt, row, c.col)}', formula, c.shared)
                    for c, letter, formula in zip(shape.columns, shape.letters, shape.formulas)]
            if not own_row:
                self._plans[id(shape)] = plan
        return plan

    def _xml(self, row: int, shape: Shape, values: Sequence, rr: int, share: str = PLAIN,
             si0: int = 0, last: int = 0) -> str:
        """The row's XML: by the shape's compiled row writer (`_compile`), or, for a row with a
        format of its own, cell by cell (`_xml_cells`). `share`: the row's shared columns
        written as usual (PLAIN), as the first cell of their shared groups (MASTER: the groups'
        ids from `si0`, their rows to `last`, 1-based) or as a later cell of them (FOLLOW)."""
        if self._own_format(row):
            return self._xml_cells(row, shape, values, rr)
        key = (id(shape), share)
        write = self._compiled.get(key)
        if write is None:
            write = self._compiled[key] = _compile(self._plan(shape, row), self.streaming,
                                                   self._text, share)
        return write(row + 1, values, rr, si0, last)

    def _own_format(self, row: int) -> bool:
        info = self.ws.row_info.get(row)
        return info is not None and bool(info.row_format)

    def _take(self, row: int, shape: Shape, values: Sequence, rr: int, out) -> None:
        """Pass a row on to `out` (a function of the row and its XML), through the pending
        group of rows that may share their formulas (`_group`): a row joins it when its shape
        has the group's share key and it is the next row, while the group is under SHARED_ROWS."""
        key = None if shape.share_key is None or self._own_format(row) else shape.share_key
        group = self._group
        if group and (key != group[0][1].share_key or row != group[-1][0] + 1
                      or len(group) >= SHARED_ROWS):
            self._flush(out)
        if key is None:
            out(row, self._xml(row, shape, values, rr))
        else:
            self._group.append((row, shape, values, rr))

    def _flush(self, out) -> None:
        """Write the pending group: one row alone as usual; else its first row opens a shared
        formula per shared column over the group's rows, and the other rows refer to it."""
        group = self._group
        if not group:
            return
        if len(group) == 1:
            row, shape, values, rr = group[0]
            out(row, self._xml(row, shape, values, rr))
        else:
            ws = self.ws
            si0 = getattr(ws, "_costing_si", 0)
            ws._costing_si = si0 + len(group[0][1].share_key)  # ids unique on the worksheet
            last = group[-1][0] + 1
            share = MASTER
            for row, shape, values, rr in group:
                out(row, self._xml(row, shape, values, rr, share, si0, last))
                share = FOLLOW
        self._group = []

    def _xml_cells(self, row: int, shape: Shape, values: Sequence, rr: int) -> str:
        """The row's XML cell by cell (the reference `_compile` is tested against)."""
        n = row + 1
        parts = [f'<row r="{n}">']
        add = parts.append
        for (kind, head, style, formula, _shared), v in zip(self._plan(shape, row), values):
            if kind == NUMBER or kind == DATE:
                if v is not None:
                    add(f"{head}{n}{style}><v>{v:.16G}</v></c>")
            elif kind == TEXT:
                if self.streaming:
                    add(f"{head}{n}{style}" + self._text("" if v is None else v))
                else:
                    add(f'{head}{n}{style} t="s"><v>{v}</v></c>')
            else:
                if formula is None:  # a formula of its own: (text, cached value)
                    if v is None:
                        continue
                    text, v = _escape(v[0]), v[1]
                else:
                    text = formula.format(r=n, rr=rr)
                add(f"{head}{n}{style}" + _cached(v, f"<f>{text}</f>"))
        add("</row>")
        return "".join(parts)

    def _out_streamed(self, _row: int, xml: str) -> None:
        self.ws.fh.write(xml)

    def _write(self, fh) -> None:
        """Normal mode, at close: the rows' XML, with row attributes xlsxwriter would write."""
        ws = self.ws
        info = ws.row_info

        def out(row: int, xml: str) -> None:
            ri = info.get(row)
            if ri is not None:  # a height or format set later (layout): xlsxwriter's row element
                ws._write_row(row, None, ri)
                xml = xml[xml.index(">") + 1:]
            fh.write(xml)

        for row, shape, values, rr in self.rows:
            self._take(row, shape, values, rr, out)
        self._flush(out)
        self.rows = []


def _cached(v, text: str) -> str:
    """The end of a formula cell after its style: the type of the cached value `v` (a boolean,
    an error code, a text or a number, as xlsxwriter types them), the formula element `text` and
    the value."""
    t = ""
    if isinstance(v, bool):
        t, v = ' t="b"', int(v)
    elif isinstance(v, str):
        if v in _ERROR_CODES:
            t = ' t="e"'
        elif v:
            t = ' t="str"'
        v = _escape(v)
    return f"{t}>{text}<v>{v}</v></c>"


def _own_formula(v, head: str, n: int, style: str) -> str:
    """A formula cell of its own (`v` = (text, cached value) or None: no cell)."""
    if v is None:
        return ""
    return f"{head}{n}{style}" + _cached(v[1], f"<f>{_escape(v[0])}</f>")


def _source(text: str) -> str:
    """`text` as the inside of a single-quoted string literal."""
    quoted = repr(text)
    return quoted[1:-1] if quoted[0] == "'" else quoted[1:-1].replace("'", "\\'")


def _literal(text: str) -> str:
    """`text` as the inside of a single-quoted f-string that gives `text` (braces doubled)."""
    return _source(text.replace("{", "{{").replace("}", "}}"))


def _compile(plan: list[tuple], streaming: bool, text_cell, share: str = PLAIN) -> object:
    """A function (row number, values, rr, si0, last) -> the row's XML for one shape's `plan`
    (`RowBlock._plan`): the cells of `RowBlock._xml_cells` in one expression made once per shape,
    so that a row costs no loop over its columns. A formula template's ``{r}`` and ``{rr}`` are
    the function's arguments (the template's doubled braces stay doubled in the f-string, so it
    gives the text ``str.format`` gives). `text_cell` writes a streamed text (its escaping
    and inline string). `share` (`RowBlock._xml`): how the shared columns' formulas are
    written; the k-th shared column of the shape is shared group ``si0 + k``."""
    names = [f"v{i}" for i in range(len(plan))]
    pieces = []
    k = -1
    for (kind, head, style, formula, shared), v in zip(plan, names):
        opening = _literal(head) + "{r}" + _literal(style)
        if kind == NUMBER or kind == DATE:
            pieces.append(f"('' if {v} is None else f'{opening}><v>{{{v}:.16G}}</v></c>')")
        elif kind == TEXT:
            if streaming:
                pieces.append(f"f'{opening}' + text_cell('' if {v} is None else {v})")
            else:
                pieces.append(f"f'{opening} t=\"s\"><v>{{{v}}}</v></c>'")
        elif formula is None:
            pieces.append(f"own({v}, {head!r}, r, {style!r})")
        else:
            text = _source(formula)  # a template: its braces are doubled already
            element = f"<f>{text}</f>"
            if shared and share != PLAIN:
                k += 1
                letter = _literal(head[len('<c r="'):])
                element = (f'<f t="shared" ref="{letter}{{r}}:{letter}{{last}}" si="{{si0 + {k}}}">'
                           f"{text}</f>" if share == MASTER else f'<f t="shared" si="{{si0 + {k}}}"/>')
            pieces.append(f"(f'{opening}>{element}<v>{{{v}}}</v></c>' if type({v}) is float "
                          f"else f'{opening}' + cached({v}, f'{element}'))")
    unpack = f"    {', '.join(names)}, = values\n" if names else ""
    source = (f"def row_xml(r, values, rr, si0, last):\n{unpack}"
              f"    return ''.join((f'<row r=\"{{r}}\">', {', '.join(pieces)}{',' if pieces else ''} "
              f"'</row>'))\n")
    scope = {"own": _own_formula, "cached": _cached, "text_cell": text_cell}
    exec(compile(source, "<costing.sheets.rowxml row writer>", "exec"), scope)  # noqa: S102
    return scope["row_xml"]


def _compile_measure(plan: list[tuple], shape: Shape, block: RowBlock):
    """A function (row, values) measuring one row of `shape` as `RowBlock._measure_cells` does,
    made once per shape: a number of exact type float or int (not bool) is measured in line
    (the largest and the smallest of a column whose format shows them in a monotone width, else
    each distinct value once), and so is a text of one line of at most 40 characters (the longest
    of its column); longer texts, and any other value, go through `RowBlock._measure_cell`."""
    lines = ["def measure(r, values):", "    cells = 0"]
    scope = {"cell": block._measure_cell, "counted": block.counted, "LIMIT": _MEASURED_ROWS}
    for k, (i, m, text, own_formula) in enumerate(plan):
        scope[f"m{k}"] = m
        col = shape.columns[i].col
        if text:  # a text of one line of at most 40 characters in line, any other through `cell`
            lines += [f"    v = values[{i}]",
                      "    if v.__class__ is str and len(v) <= 40 and '\\n' not in v:",
                      "        cells += 1",
                      f"        if m{k}.text is None or len(v) > m{k}.text_n:",
                      f"            m{k}.text = v",
                      f"            m{k}.text_row = r",
                      f"            m{k}.text_n = len(v)",
                      "    else:",
                      f"        cells += cell(m{k}, r, {col}, v, True)"]
            continue
        lines += [f"    v = values[{i}]", "    if v is not None:"]
        if own_formula:
            lines.append("        v = v[1]")
        lines.append("        if v.__class__ is float or v.__class__ is int:")
        lines.append("            cells += 1")
        if m.monotone:
            lines += ["            if v >= 0:",
                      f"                if m{k}.pos is None or v > m{k}.pos:",
                      f"                    m{k}.pos = v",
                      f"                    m{k}.pos_row = r",
                      f"            elif m{k}.neg is None or v < m{k}.neg:",
                      f"                m{k}.neg = v",
                      f"                m{k}.neg_row = r"]
        else:
            lines += [f"            if v not in m{k}.seen:",
                      f"                m{k}.seen[v] = r"]
        lines += ["        else:",
                  f"            cells += cell(m{k}, r, {col}, v, False)"]
    lines += ["    if r < LIMIT:", "        counted[r] = counted.get(r, 0) + cells"]
    exec(compile("\n".join(lines) + "\n", "<costing.sheets.rowxml measure>", "exec"), scope)  # noqa: S102
    return scope["measure"]


def _line(s: str) -> int:
    return max(len(part) for part in s.split("\n")) if "\n" in s else len(s)


def _install(ws) -> None:
    """Make the worksheet write, at close, its xlsxwriter rows above, between and below the
    blocks, and each block's rows in its place (normal mode)."""
    own = ws._write_rows

    def write_rows() -> None:
        blocks = sorted((b for b in ws._costing_blocks if b.rows), key=lambda b: b.first)
        if not blocks or ws.dim_rowmin is None:
            return own()
        low = ws.dim_rowmin
        for b in blocks:
            _own_rows(ws, own, low, b.first - 1)
            b._write(ws.fh)
            low = b.next
        _own_rows(ws, own, low, ws.dim_rowmax)

    ws._write_rows = write_rows


def _own_rows(ws, own, low: int, high: int) -> None:
    """xlsxwriter's rows `low`..`high` (zero-based, inclusive), if any; row heights set on the
    blocks' rows are theirs (`RowBlock._write`), not written again here."""
    if high < low:
        return
    keep = ws.dim_rowmin, ws.dim_rowmax
    ws.dim_rowmin, ws.dim_rowmax = low, high
    try:
        own()
    finally:
        ws.dim_rowmin, ws.dim_rowmax = keep


class RowSink:
    """xlsxwriter's write_string / write_number / write_formula / write_datetime for the rows
    of a RowBlock: a sheet module writes its rows to the sink as it would to the worksheet
    (rows in increasing order, cells in any order within a row) and the sink hands each row to
    the block as one shape of its cells. Formulas go through the worksheet's own formula
    preparation, dates through its own date conversion, NaN and infinity become #NUM! as
    xlsxwriter writes them; so the cells are the ones the worksheet would hold.

    With FAST_ROWS off, every call goes straight to the worksheet (the reference path)."""

    def __init__(self, ws, first_row: int):
        self.ws = ws
        self.fast = FAST_ROWS
        self.block = RowBlock(ws, first_row) if self.fast else None
        self.row = -1
        self.cells: list[tuple] = []
        self.shapes: dict[tuple, Shape] = {}

    def write_string(self, row: int, col: int, text: str, fmt=None) -> None:
        if not self.fast:
            self.ws.write_string(row, col, text, fmt)
            return
        self._cell(row, col, TEXT, fmt, text)

    def write_number(self, row: int, col: int, value: float, fmt=None) -> None:
        if not self.fast:
            self.ws.write_number(row, col, value, fmt)
            return
        if value != value or value in (float("inf"), float("-inf")):
            self._cell(row, col, FORMULA, fmt, ("#NUM!", "#NUM!"))
        else:
            self._cell(row, col, NUMBER, fmt, value)

    def write_formula(self, row: int, col: int, formula: str, fmt=None, value=0) -> None:
        if not self.fast:
            self.ws.write_formula(row, col, formula, fmt, value)
            return
        self._cell(row, col, FORMULA, fmt, (self.ws._prepare_formula(formula), value))

    def write_datetime(self, row: int, col: int, when, fmt=None) -> None:
        if not self.fast:
            self.ws.write_datetime(row, col, when, fmt)
            return
        self._cell(row, col, DATE, fmt, self.ws._convert_date_time(when))

    def add_row(self, row: int, shape: Shape, values: Sequence, rr: int = 0) -> None:
        """Write a whole row of `shape` at once, one value per column as RowBlock.add takes them,
        except that a date is a datetime: the cells the write_* calls would write (a number None:
        no cell; a template's ``{r}`` this row's number, ``{rr}`` `rr`). Fast, the row goes to
        the block as it is; cell by cell (FAST_ROWS off), or when a number is NaN or infinite
        (#NUM!, as write_number writes it), each cell goes through write_*."""
        numbers = shape.numbers
        if self.fast and all(values[i] is None or values[i] - values[i] == 0 for i in numbers):
            self._flush()
            self.row = row
            values = list(values)
            for i in shape.dates:
                if values[i] is not None:
                    values[i] = self.ws._convert_date_time(values[i])
            self.block.add(row, shape, values, rr)
            return
        for c, v in zip(shape.columns, values):
            if c.kind == TEXT:
                self.write_string(row, c.col, v, c.fmt)
            elif v is None:
                continue
            elif c.kind == NUMBER:
                self.write_number(row, c.col, v, c.fmt)
            elif c.kind == DATE:
                self.write_datetime(row, c.col, v, c.fmt)
            elif c.template is None:
                self.write_formula(row, c.col, "=" + v[0], c.fmt, v[1])
            else:
                self.write_formula(row, c.col, "=" + c.template.format(r=row + 1, rr=rr), c.fmt, v)

    def finish(self) -> None:
        """Hand over the last row and close the block."""
        if self.fast:
            self._flush()
            self.block.finish()

    def _cell(self, row: int, col: int, kind: str, fmt, value) -> None:
        if row != self.row:
            self._flush()
            self.row = row
        self.cells.append((col, kind, fmt, value))

    def _flush(self) -> None:
        if not self.cells:
            return
        cells = sorted({c[0]: c for c in self.cells}.values())  # a cell written twice: the last
        key = tuple((col, kind, id(fmt)) for col, kind, fmt, _v in cells)
        shape = self.shapes.get(key)
        if shape is None:
            shape = self.shapes[key] = Shape([Column(col, kind, fmt) for col, kind, fmt, _v in cells])
        self.block.add(self.row, shape, [v for *_c, v in cells])
        self.cells = []
