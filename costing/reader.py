"""Read the input workbook into plain rows with cell addresses. Knows openpyxl; knows
nothing of graphs or costs. The file is opened read-only and never written."""

from __future__ import annotations

import difflib
import hashlib
import os
import zipfile
from dataclasses import dataclass, field

from openpyxl.utils import get_column_letter

from .contract import SHEETS, normalise_header
from .model import ERROR, WARNING, Problem

# A workbook whose parts unpack to more than this is refused before parsing (zip bombs).
MAX_UNPACKED_BYTES = 1_500_000_000
MAX_COMPRESSION_RATIO = 200


class InputError(Exception):
    """The workbook cannot be read at all; carries the problems that say why."""

    def __init__(self, problems: list[Problem]):
        super().__init__("; ".join(str(p) for p in problems))
        self.problems = problems


@dataclass
class RawRow:
    row: int  # 1-based spreadsheet row
    values: dict[str, object]  # column name -> cached cell value
    formulas: set[str] = field(default_factory=set)  # columns holding a formula with no cached value


@dataclass
class RawSheet:
    name: str  # contract name
    title: str  # title in the file
    columns: dict[str, int]  # contract column name -> 1-based column index
    rows: list[RawRow]

    def letters(self) -> dict[str, str]:
        return {c: get_column_letter(i) for c, i in self.columns.items()}

    def cell(self, column: str, row: int) -> str:
        idx = self.columns.get(column)
        return f"{get_column_letter(idx)}{row}" if idx else f"row {row}"


@dataclass
class RawWorkbook:
    path: str
    sha256: str
    sheets: dict[str, RawSheet]
    problems: list[Problem]


def sha256_of(path: str) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def _refuse(message: str, fix: str) -> InputError:
    return InputError([Problem(ERROR, "", "", message, fix)])


def _check_container(path: str) -> None:
    """Refuse what is not an .xlsx workbook before openpyxl sees it, with a message a
    coordinator can act on."""
    if not os.path.exists(path):
        raise _refuse(f"file not found: {path}", "check the path and file name")
    if os.path.isdir(path):
        raise _refuse(f"{path} is a folder, not a workbook", "give the path of an .xlsx file")
    size = os.path.getsize(path)
    if size == 0:
        raise _refuse(f"{os.path.basename(path)} is empty (0 bytes)",
                      "save the workbook again from the spreadsheet application as .xlsx")
    with open(path, "rb") as f:
        head = f.read(8)
    ext = os.path.splitext(path)[1].lower()
    if head.startswith(b"\xd0\xcf\x11\xe0"):
        kind = ("a password-protected (encrypted) workbook" if ext in (".xlsx", ".xlsm")
                else "an old-style .xls workbook")
        fix = ("remove the password (File > Info > Protect) and save as .xlsx"
               if "password" in kind else "open it and save it as Excel Workbook (.xlsx)")
        raise _refuse(f"{os.path.basename(path)} is {kind}, not an .xlsx workbook", fix)
    if not head.startswith(b"PK"):
        what = "a text/CSV file" if ext in (".csv", ".txt") else "not an .xlsx workbook"
        raise _refuse(f"{os.path.basename(path)} is {what}",
                      "open it in a spreadsheet application and save it as Excel Workbook (.xlsx), "
                      "or start from `costing template`")
    try:
        with zipfile.ZipFile(path) as z:
            names = z.namelist()
            total = 0
            for info in z.infolist():
                total += info.file_size
                if info.compress_size and info.file_size / max(info.compress_size, 1) > \
                        MAX_COMPRESSION_RATIO and info.file_size > 50_000_000:
                    raise _refuse(f"{os.path.basename(path)}: part {info.filename} unpacks "
                                  f"{info.file_size / info.compress_size:.0f}x larger than it is "
                                  "packed; refused as a possible zip bomb",
                                  "save a fresh copy of the workbook from the spreadsheet application")
            if total > MAX_UNPACKED_BYTES:
                raise _refuse(f"{os.path.basename(path)} unpacks to {total / 1e9:.1f} GB; "
                              "refused as too large or a zip bomb",
                              "split the workbook or remove unused sheets")
    except zipfile.BadZipFile:
        raise _refuse(f"{os.path.basename(path)} is damaged or not a complete .xlsx file "
                      "(bad zip container)", "save the workbook again; if it was sent to you, "
                      "ask for it again") from None
    if "content.xml" in names and "xl/workbook.xml" not in names:
        raise _refuse(f"{os.path.basename(path)} is an OpenDocument (.ods) spreadsheet",
                      "save it as Excel Workbook (.xlsx)")
    if "xl/workbook.bin" in names:
        raise _refuse(f"{os.path.basename(path)} is a binary .xlsb workbook",
                      "save it as Excel Workbook (.xlsx)")
    if "xl/workbook.xml" not in names:
        raise _refuse(f"{os.path.basename(path)} is a zip file but not an .xlsx workbook",
                      "give the .xlsx input workbook (start from `costing template`)")


def _open(path: str, data_only: bool):
    import openpyxl
    from openpyxl.utils.exceptions import InvalidFileException

    try:
        # read_only streams rows and never opens the file for writing
        return openpyxl.load_workbook(path, read_only=True, data_only=data_only,
                                      keep_links=False)
    except (InvalidFileException, zipfile.BadZipFile, KeyError, ValueError, OSError,
            TypeError, AttributeError, IndexError, EOFError) as e:
        detail = str(e).splitlines()[0][:200] if str(e) else type(e).__name__
        if "Entities" in type(e.__cause__).__name__ if e.__cause__ else False:
            detail = "it declares XML entities (possible entity-expansion attack)"
        raise _refuse(f"{os.path.basename(path)} could not be read as a workbook: {detail}",
                      "open it in a spreadsheet application, save it as .xlsx and try again") \
            from None


def _match_sheet(titles: list[str], wanted: str) -> str | None:
    norm = {normalise_header(t): t for t in titles}
    return norm.get(normalise_header(wanted))


def read_workbook(path: str) -> RawWorkbook:
    _check_container(path)
    digest = sha256_of(path)
    values_wb = _open(path, data_only=True)
    formula_wb = _open(path, data_only=False)
    problems: list[Problem] = []
    sheets: dict[str, RawSheet] = {}
    try:
        titles = list(values_wb.sheetnames)
        known = {normalise_header(s.name) for s in SHEETS}
        for spec in SHEETS:
            title = _match_sheet(titles, spec.name)
            if title is None:
                if spec.required:
                    close = difflib.get_close_matches(spec.name, [t for t in titles if
                                                      normalise_header(t) not in known], n=1,
                                                      cutoff=0.6)
                    hint = f"rename sheet '{close[0]}' to {spec.name}" if close else \
                        f"add a sheet named {spec.name} (copy it from `costing template`)"
                    problems.append(Problem(ERROR, spec.name, "",
                                            f"sheet {spec.name} is missing", hint))
                continue
            sheet = _read_sheet(spec, title, values_wb[title], formula_wb[title], problems)
            if sheet is not None:
                sheets[spec.name] = sheet
    finally:
        values_wb.close()
        formula_wb.close()
    return RawWorkbook(path, digest, sheets, problems)


def _blank(v: object) -> bool:
    return v is None or (isinstance(v, str) and v.strip() == "")


def _read_sheet(spec, title, ws_values, ws_formulas, problems) -> RawSheet | None:
    rows_v = ws_values.iter_rows(values_only=True)
    rows_f = ws_formulas.iter_rows(values_only=True)
    header = next(rows_v, None)
    next(rows_f, None)
    if header is None or all(_blank(h) for h in header):
        problems.append(Problem(ERROR, title, "A1", f"sheet {title} has no header row",
                                f"put the column names of {spec.name} in row 1 "
                                "(copy them from `costing template`)"))
        return None
    wanted = {c.name: c for c in spec.columns}
    columns: dict[str, int] = {}
    unknown: list[tuple[int, str]] = []
    for i, h in enumerate(header, start=1):
        if _blank(h):
            continue
        key = normalise_header(h)
        if key.endswith("_") or key.startswith("_"):
            key = key.strip("_")
        if key in wanted:
            if key in columns:
                problems.append(Problem(ERROR, title, f"{get_column_letter(i)}1",
                                        f"column {key} appears twice (also in "
                                        f"{get_column_letter(columns[key])}1)",
                                        "delete or rename one of the two columns"))
            else:
                columns[key] = i
        else:
            unknown.append((i, str(h)))
    for i, h in unknown:
        missing = [c for c in wanted if c not in columns]
        close = difflib.get_close_matches(normalise_header(h), missing, n=1, cutoff=0.6)
        if close:
            problems.append(Problem(WARNING if not wanted[close[0]].required else ERROR, title,
                                    f"{get_column_letter(i)}1",
                                    f"unknown column '{h}'; did you mean {close[0]}?",
                                    f"rename the header to {close[0]}"))
        else:
            problems.append(Problem(WARNING, title, f"{get_column_letter(i)}1",
                                    f"column '{h}' is not used by the tool and is ignored",
                                    "nothing to do if it is your own note column"))
    hinted = {p.message.split("did you mean ")[-1].rstrip("?") for p in problems
              if p.sheet == title and "did you mean" in p.message}
    for col in spec.columns:
        if col.required and col.name not in columns and col.name not in hinted:
            problems.append(Problem(ERROR, title, "1",
                                    f"required column {col.name} is missing",
                                    f"add a column headed {col.name} in row 1"))
    rows: list[RawRow] = []
    for r, (vals, forms) in enumerate(zip(rows_v, rows_f), start=2):
        record: dict[str, object] = {}
        formula_cols: set[str] = set()
        empty = True
        for name, idx in columns.items():
            v = vals[idx - 1] if idx - 1 < len(vals) else None
            f = forms[idx - 1] if forms is not None and idx - 1 < len(forms) else None
            if isinstance(v, str):
                v = v.strip()
                if v == "":
                    v = None
            if v is None and isinstance(f, str) and f.startswith("="):
                formula_cols.add(name)
                empty = False
            if v is not None:
                empty = False
            record[name] = v
        if not empty:
            rows.append(RawRow(r, record, formula_cols))
    return RawSheet(spec.name, title, columns, rows)
