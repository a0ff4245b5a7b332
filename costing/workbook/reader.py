"""Read the input workbook into plain rows with cell addresses. Knows openpyxl; knows
nothing of graphs or costs. The file is opened read-only and never written."""

from __future__ import annotations

import hashlib
import os
import posixpath
import re
import warnings
import zipfile
import zlib

from openpyxl.utils import get_column_letter, range_boundaries

from costing.contract.inputs import SHEETS, closest, normalise_header
from costing.contract.rows import RawRow, RawSheet, RawWorkbook
from costing.errors import InputError
from costing.model import ERROR, WARNING, Problem

# A workbook whose parts unpack to more than this is refused before parsing (zip bombs).
# Only the sizes in the zip directory are read; Python's zipfile never unpacks a part beyond
# the size stated there, so memory stays bounded even when a part lies about its size.
MAX_UNPACKED_BYTES = 1_500_000_000
# A part bigger than RATIO_CHECK_MIN_BYTES that unpacks more than this many times its packed
# size is refused. Real sheets pack 5 to 20 times (a sheet of 30,000 rows of blank text cells:
# about 16 times); a part of spaces or zeros packs about 1,000 times.
MAX_COMPRESSION_RATIO = 100
RATIO_CHECK_MIN_BYTES = 10_000_000
# Rows and columns of a sheet: Microsoft "Excel specifications and limits".
MAX_ROWS = 1_048_576
MAX_COLUMNS = 16_384
# At most this many problems of one kind per sheet (merged ranges, unused columns) are listed.
MAX_LISTED = 20

# Everything openpyxl, zipfile, zlib and the XML parser raise on a damaged or hostile file
# (public: readers of costed workbooks catch the same).
# defusedxml's EntitiesForbidden is a ValueError; xml.etree's ParseError is a SyntaxError.
READ_ERRORS = (ValueError, LookupError, TypeError, AttributeError, OverflowError,
                SyntaxError, EOFError, OSError, RuntimeError, NotImplementedError,
                zipfile.BadZipFile, zlib.error)


def _tolerate_non_finite_numbers() -> None:
    """openpyxl reads a number cell without '.' or 'E' as an int, so <v>NaN</v> or <v>INF</v>
    (written by some tools; a spreadsheet application never saves them) fails the whole sheet
    with "invalid literal for int()". Read them as float NaN or infinity instead, so validation
    names the cell, as it does for 1E+400. Anything else that is not a number still fails."""
    try:
        from openpyxl.worksheet import _reader
    except ImportError:  # pragma: no cover - another openpyxl layout: keep its behaviour
        return
    cast = getattr(_reader, "_cast_number", None)
    if cast is None or getattr(cast, "tolerates_non_finite", False):
        return

    def cast_number(value):
        try:
            return cast(value)
        except ValueError:
            if value.strip().lstrip("+-").lower() in ("nan", "inf", "infinity"):
                return float(value)
            raise

    cast_number.tolerates_non_finite = True
    _reader._cast_number = cast_number


_tolerate_non_finite_numbers()


def sha256_of(path: str) -> str:
    """SHA-256 of the file's bytes (hex), read in 1 MiB chunks."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def _refuse(message: str, fix: str) -> InputError:
    return InputError([Problem(ERROR, "", "", message, fix)])


def _decodes(data: bytes) -> bool:
    try:
        data.decode("utf-8")
    except UnicodeDecodeError as e:  # a character cut at the end of the sample is fine
        return e.start >= len(data) - 3
    return True


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
        start = f.read(4096)
    head = start[:8]
    ext = os.path.splitext(path)[1].lower()
    if head.startswith(b"\xd0\xcf\x11\xe0"):
        raise _refuse(*_compound_file(path, ext))
    if not head.startswith(b"PK"):
        text = b"\0" not in start and _decodes(start)
        what = ("a text/CSV file" if ext in (".csv", ".txt") else
                f"a text file (CSV?) named {ext or 'without an extension'}, not an .xlsx workbook"
                if text else "not an .xlsx workbook")
        raise _refuse(f"{os.path.basename(path)} is {what}",
                      "open it in a spreadsheet application and save it as Excel Workbook (.xlsx), "
                      "or start from `costing template`")
    try:
        with zipfile.ZipFile(path) as z:
            names = z.namelist()
            total = 0
            for info in z.infolist():
                total += info.file_size
                ratio = info.file_size / max(info.compress_size, 1)
                if info.file_size > RATIO_CHECK_MIN_BYTES and ratio > MAX_COMPRESSION_RATIO:
                    raise _refuse(f"{os.path.basename(path)}: part {info.filename[:80]} unpacks "
                                  f"to {info.file_size / 1e6:,.0f} MB, {ratio:,.0f} times its "
                                  "packed size; refused as a possible zip bomb",
                                  "save a fresh copy of the workbook from the spreadsheet application")
            if total > MAX_UNPACKED_BYTES:
                raise _refuse(f"{os.path.basename(path)} unpacks to {total / 1e9:.1f} GB; "
                              "refused as too large or a zip bomb",
                              "split the workbook or remove unused sheets")
    except (zipfile.BadZipFile, OSError, EOFError, ValueError, NotImplementedError):
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
    _check_package(path, set(names))


_STRICT_NS = b"purl.oclc.org/ooxml/"  # ISO/IEC 29500 Strict namespaces start so
_PACKAGE_XML_LIMIT = 20_000_000  # workbook.xml and its relationships are read whole below this


def _check_package(path: str, names: set[str]) -> None:
    """Refuse a workbook saved as Strict Open XML (openpyxl finds none of its sheets and would
    call them missing) and one whose workbook lists a worksheet part the zip does not hold
    (openpyxl silently drops that sheet): both with what to do, not "sheet is missing"."""
    from defusedxml import ElementTree

    name = os.path.basename(path)
    try:
        with zipfile.ZipFile(path) as z:
            with z.open("xl/workbook.xml") as f:
                head = f.read(8192)
            if _STRICT_NS in head:
                raise _refuse(f"{name} is saved in the Strict Open XML form, which this tool does "
                              "not read", "open it and save it as Excel Workbook (.xlsx), not "
                              "Strict Open XML Spreadsheet")
            rels_name = "xl/_rels/workbook.xml.rels"
            if rels_name not in names or any(z.getinfo(n).file_size > _PACKAGE_XML_LIMIT
                                             for n in ("xl/workbook.xml", rels_name)):
                return  # left to openpyxl
            book = ElementTree.fromstring(z.read("xl/workbook.xml"))
            rels = ElementTree.fromstring(z.read(rels_name))
    except InputError:
        raise
    except Exception:  # malformed or hostile XML: openpyxl's reading reports it
        return
    targets = {}
    for rel in rels:
        if rel.tag.endswith("Relationship") and rel.get("TargetMode") != "External":
            target = rel.get("Target") or ""
            target = target.lstrip("/") if target.startswith("/") else \
                posixpath.normpath(posixpath.join("xl", target))
            targets[rel.get("Id")] = target
    rid = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}id"
    for el in book.iter():
        if not el.tag.endswith("}sheet"):
            continue
        title, part = el.get("name") or "?", targets.get(el.get(rid))
        if part is None or part not in names:
            what = f"its part {part[:80]}" if part else "its relationship"
            raise InputError([Problem(ERROR, title, "", f"{name} is damaged: the workbook lists sheet "
                                      f"'{_short(title)}' but {what} is missing from the file",
                                      _DAMAGED_FIX)])


def _compound_file(path: str, ext: str) -> tuple[str, str]:
    """(message, fix) for an OLE2 compound file, named by the streams in its directory: an
    encrypted workbook holds `EncryptedPackage`, an old binary workbook `Workbook` (BIFF8) or
    `Book` (BIFF5) ([MS-OFFCRYPTO] 2.3.4.4; [MS-XLS] 2.1.2)."""
    from .ole2 import stream_names

    name = os.path.basename(path)
    streams = {n.lower() for n in stream_names(path) or ()}
    save = "open it in the spreadsheet application and save it as Excel Workbook (.xlsx)"
    if "encryptedpackage" in streams:
        return (f"{name} is a password-protected (encrypted) workbook, not an .xlsx workbook it can "
                "read", "remove the password (File > Info > Protect Workbook > Encrypt with "
                "Password, clear it) and save as Excel Workbook (.xlsx)")
    if streams & {"workbook", "book"}:
        named = f", named {ext}" if ext not in (".xls", "") else ""
        return f"{name} is an old-style binary .xls workbook{named}, not an .xlsx workbook", save
    if streams:
        return (f"{name} is an OLE2 compound file (e.g. an old Word or Outlook file) with no "
                "workbook in it", "give the .xlsx input workbook (start from `costing template`)")
    return (f"{name} is an OLE2 compound file (an old-style .xls workbook or a password-protected "
            "one) whose directory cannot be read, not an .xlsx workbook",
            "remove any password and " + save)


_REREAD_FIX = "open it in a spreadsheet application, save it as .xlsx and try again"
_DAMAGED_FIX = ("save the workbook again from the spreadsheet application; if it was sent to you, "
                "ask for it again")
_HOSTILE_FIX = ("spreadsheet applications do not write XML entities: do not open the file; ask "
                "the sender for a workbook saved from a spreadsheet application")


def describe_read_error(e: BaseException) -> tuple[str, str]:
    """(what went wrong, what to do), in words a coordinator can act on, for what openpyxl,
    zipfile or the XML parser raised."""
    names = {type(e).__name__, type(e.__cause__).__name__ if e.__cause__ else ""}
    if any("Entities" in n or "DTD" in n or "External" in n for n in names):
        return "it declares XML entities (possible entity-expansion attack); refused", _HOSTILE_FIX
    text = str(e).splitlines()[0][:200] if str(e).strip() else ""
    if isinstance(e, (zlib.error, zipfile.BadZipFile, EOFError)):
        return f"it is damaged: a part does not unpack ({text or type(e).__name__})", _DAMAGED_FIX
    if isinstance(e, KeyError):
        return f"it is damaged: a part it lists is missing ({text})", _DAMAGED_FIX
    if isinstance(e, LookupError) and "encoding" in text:  # e.g. encoding="AUTF-8" in a part
        return f"a part declares a text encoding that does not exist ({text})", _DAMAGED_FIX
    if isinstance(e, SyntaxError):  # xml.etree.ElementTree.ParseError
        return f"a part holds malformed XML ({text})", _DAMAGED_FIX
    if isinstance(e, ValueError):  # e.g. a number cell holding NaN: int('NaN') fails
        return f"it holds a value that cannot be read ({text})", _DAMAGED_FIX
    return (f"{type(e).__name__}: {text}" if text else type(e).__name__), _REREAD_FIX


class _Book:
    """A read-only workbook and the file it streams from (openpyxl does not close a file
    object it was given)."""

    def __init__(self, wb, f):
        self.wb, self.f = wb, f

    @property
    def sheetnames(self) -> list[str]:
        return self.wb.sheetnames

    def __getitem__(self, title: str):
        return self.wb[title]

    def close(self) -> None:
        try:
            self.wb.close()
        finally:
            self.f.close()


def _open(path: str, data_only: bool) -> _Book:
    import openpyxl

    try:
        # A file object, so a real .xlsx saved under another extension is still read.
        # read_only streams rows and never opens the file for writing.
        f = open(path, "rb")
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # openpyxl notes unsupported extensions
                return _Book(openpyxl.load_workbook(f, read_only=True, data_only=data_only,
                                                    keep_links=False), f)
        except BaseException:
            f.close()
            raise
    except READ_ERRORS as e:
        detail, fix = describe_read_error(e)
        raise _refuse(f"{os.path.basename(path)} could not be read as a workbook: {detail}",
                      fix) from None


_FORMULA_RE = re.compile(rb"<(?:[\w.-]+:)?f[\s>/]")
_MERGE_RE = re.compile(rb"<(?:[\w.-]+:)?mergeCell\b[^>]{0,1000}?\bref=[\"']([A-Za-z0-9$:]{2,40})[\"']")


def _scan_sheet_xml(ws) -> tuple[bool, set[str]]:
    """(has formulas, merged ranges) of a sheet, from its XML bytes, streamed in chunks.

    Read-only worksheets expose neither merged cells nor whether any cell holds a formula;
    knowing there are none saves the second (formula) pass over a large sheet. If the part
    cannot be reached, assume formulas and no merges (a slower read, never a wrong one)."""
    get_source = getattr(ws, "_get_source", None)
    if get_source is None:
        return True, set()
    formulas = False
    merges: set[str] = set()
    tail = b""
    with get_source() as src:
        while True:
            chunk = src.read(1 << 20)
            if not chunk:
                break
            buf = tail + chunk
            if not formulas and _FORMULA_RE.search(buf):
                formulas = True
            if b"mergeCell" in buf:
                merges.update(m.group(1).decode("ascii") for m in _MERGE_RE.finditer(buf))
            tail = buf[-1100:]
    return formulas, merges


def _match_sheets(titles: list[str], wanted: str) -> list[str]:
    return [t for t in titles if normalise_header(t) == normalise_header(wanted)]


def read_workbook(path: str) -> RawWorkbook:
    """Open an input workbook safely and read every contract sheet's rows.

    Parameters
    ----------
    path : str
        An .xlsx file; opened read-only, never changed.

    Returns
    -------
    RawWorkbook
        Rows with their cell addresses and the problems found while reading.

    Raises
    ------
    InputError
        The file is not a readable workbook (csv, xls, ods, encrypted, damaged, hostile); its
        problems say why and what to do."""
    _check_container(path)
    digest = sha256_of(path)
    problems: list[Problem] = []
    ext = os.path.splitext(path)[1].lower()
    if ext not in (".xlsx", ".xlsm", ".xltx", ".xltm"):
        problems.append(Problem(WARNING, "", "", f"{os.path.basename(path)} is an .xlsx workbook "
                                f"but its name ends in '{ext or '(nothing)'}'; read as .xlsx",
                                "rename the file to end in .xlsx"))
    values_wb = _open(path, data_only=True)
    formula_wb = None  # opened only when a sheet holds formulas
    sheets: dict[str, RawSheet] = {}
    current = ""
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            titles = list(values_wb.wb.sheetnames)
            known = {normalise_header(s.name) for s in SHEETS}
            for spec in SHEETS:
                found = _match_sheets(titles, spec.name)
                if not found:
                    if spec.required:
                        others = {normalise_header(t): t for t in titles
                                  if normalise_header(t) not in known}
                        close = closest(normalise_header(spec.name), others)
                        hint = f"rename sheet '{others[close]}' to {spec.name}" if close else \
                            f"add a sheet named {spec.name} (copy it from `costing template`)"
                        problems.append(Problem(ERROR, spec.name, "",
                                                f"sheet {spec.name} is missing", hint))
                    continue
                if len(found) > 1:
                    problems.append(Problem(ERROR, found[1], "", "sheets " + ", ".join(
                        f"'{t}'" for t in found) + f" could each be the {spec.name} sheet",
                        "delete or rename all but one of them"))
                    continue
                title = current = found[0]
                ws = values_wb.wb[title]
                if not hasattr(ws, "iter_rows"):
                    problems.append(Problem(ERROR, title, "", f"sheet {title} is a chart sheet, "
                                            "not a table", f"put the {spec.name} table on a "
                                            "worksheet (copy it from `costing template`)"))
                    continue
                has_formulas, merges = _scan_sheet_xml(ws)
                ws_f = None
                if has_formulas:
                    if formula_wb is None:
                        formula_wb = _open(path, data_only=False)
                    ws_f = formula_wb.wb[title]
                sheet = _read_sheet(spec, title, ws, ws_f, merges, problems)
                if sheet is not None:
                    sheets[spec.name] = sheet
    except READ_ERRORS as e:
        where = f"sheet {current} of " if current else ""
        detail, fix = describe_read_error(e)
        raise InputError([Problem(ERROR, current, "", f"{where}{os.path.basename(path)} could "
                                  f"not be read: {detail}", fix)]) from None
    finally:
        values_wb.close()
        if formula_wb is not None:
            formula_wb.close()
    return RawWorkbook(path, digest, sheets, problems)


def _blank(v: object) -> bool:
    return v is None or (isinstance(v, str) and v.strip() == "")


def iter_rows(ws, min_row: int = 1, max_row: int | None = None, max_col: int | None = None):
    """Rows of a read-only sheet as value tuples. The sheet's stated dimension is ignored:
    a wrong or hostile one (A1:XFD1048576) would otherwise pad every row to 16,384 cells and
    add empty rows up to row 1,048,576."""
    ws.reset_dimensions()
    return ws.iter_rows(min_row=min_row, max_row=max_row, max_col=max_col, values_only=True)


def _looks_like_header(row, wanted) -> int:
    return sum(1 for h in row or () if not _blank(h) and normalise_header(h) in wanted)


def _read_sheet(spec, title, ws_values, ws_formulas, merges, problems) -> RawSheet | None:
    header = next(iter_rows(ws_values, 1, 1, None), None)
    header = tuple(header or ())[:MAX_COLUMNS]
    wanted = {c.name: c for c in spec.columns}
    names = ", ".join(c.name for c in spec.columns if c.required)
    if all(_blank(h) for h in header):
        problems.append(Problem(ERROR, title, "A1", f"sheet {title} has no header row (row 1 is "
                                "empty)", f"put the column names of {spec.name} in row 1: {names} "
                                "(copy them from `costing template`)"))
        return None
    columns: dict[str, int] = {}
    unknown: list[tuple[int, str]] = []
    for i, h in enumerate(header, start=1):
        if _blank(h):
            continue
        key = normalise_header(h)
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
    hints: list[tuple[int, str, str]] = []
    for i, h in unknown:
        missing = [c for c in wanted if c not in columns]
        close = closest(normalise_header(h), missing)
        if close:
            hints.append((i, h, close))
    if not columns and not hints:
        # Nothing in row 1 names a column: the header is lower down, or missing.
        width = min(max(len(header), 30) + 5, MAX_COLUMNS)
        for r, row in enumerate(iter_rows(ws_values, 2, 30, width), start=2):
            if _looks_like_header(row, wanted) >= 2:
                problems.append(Problem(ERROR, title, f"A{r}", f"the column names of {spec.name} "
                                        f"are in row {r}, not row 1",
                                        f"delete rows 1 to {r - 1} so the header is row 1"))
                return None
        seen = ", ".join(f"'{_short(h)}'" for _, h in unknown[:4])
        problems.append(Problem(ERROR, title, "A1", f"row 1 of sheet {title} holds no column names "
                                f"of {spec.name} (it holds {seen}); the header row seems to be "
                                "missing", f"insert a row 1 with the column names: {names} and the "
                                "optional ones (copy them from `costing template`)"))
        return None
    hinted: dict[str, int] = {}
    for i, h, name in hints:
        if name not in hinted:
            hinted[name] = i
            problems.append(Problem(ERROR, title, f"{get_column_letter(i)}1",
                                    f"unknown column '{_short(h)}'; did you mean {name}?",
                                    f"rename the header to {name} (its values are not read until "
                                    "then)"))
    ignored = [(i, h) for i, h in unknown if i not in hinted.values()]
    for i, h in ignored[:MAX_LISTED]:
        problems.append(Problem(WARNING, title, f"{get_column_letter(i)}1",
                                f"column '{_short(h)}' is not used by the tool and is ignored",
                                "nothing to do if it is your own note column"))
    if len(ignored) > MAX_LISTED:
        problems.append(Problem(WARNING, title, "1:1", f"{len(ignored) - MAX_LISTED} more columns "
                                "are not used by the tool and are ignored",
                                "nothing to do if they are your own columns"))
    for col in spec.columns:
        if col.required and col.name not in columns and col.name not in hinted:
            problems.append(Problem(ERROR, title, "1:1",
                                    f"required column {col.name} is missing",
                                    f"add a column headed {col.name} in row 1"))
    _merged_problems(spec, title, columns, merges, problems)
    rows: list[RawRow] = []
    if not columns:
        return RawSheet(spec.name, title, columns, rows)
    width = max(columns.values())
    id_columns = {c.name for c in spec.columns if c.kind in ("id", "depot", "vehicle")
                  or (spec.name == "Rates" and c.name == "vehicle")}
    rows_v = iter_rows(ws_values, 2, None, width)
    rows_f = iter_rows(ws_formulas, 2, None, width) if ws_formulas is not None else None
    r = 1
    for vals in rows_v:
        r += 1
        forms = next(rows_f, None) if rows_f is not None else None
        if r > MAX_ROWS:
            problems.append(Problem(ERROR, title, f"A{MAX_ROWS}", "the sheet has rows beyond row "
                                    f"{MAX_ROWS:,}, the last row a spreadsheet can have (Microsoft "
                                    "'Excel specifications and limits'); the file is damaged",
                                    "save a fresh copy of the workbook from the spreadsheet "
                                    "application"))
            break
        if vals.count(None) == len(vals) and (forms is None or forms.count(None) == len(forms)):
            continue
        record: dict[str, object] = {}
        formula_cols: set[str] = set()
        empty = True
        for name, idx in columns.items():
            v = vals[idx - 1] if idx - 1 < len(vals) else None
            f = forms[idx - 1] if forms is not None and idx - 1 < len(forms) else None
            if isinstance(v, str):
                stripped = v.strip()
                if stripped and stripped != v and name in id_columns:
                    _spaces_problem(problems, title, f"{get_column_letter(idx)}{r}", name, v, stripped)
                v = stripped or None
            if v is None and is_formula(f):
                formula_cols.add(name)
                empty = False
            if v is not None:
                empty = False
            record[name] = v
        if not empty:
            rows.append(RawRow(r, record, formula_cols))
    return RawSheet(spec.name, title, columns, rows)


def _spaces_problem(problems, title, cell, name, raw, stripped) -> None:
    """An id or reference with spaces around it ('d01 ') is read without them; said, because a
    lookup in the spreadsheet itself would not match it."""
    problems.append(Problem(WARNING, title, cell, f"{name} '{_short(raw)}' has spaces before or after "
                            f"it; read as '{_short(stripped)}'", "delete the spaces (a lookup in the "
                            "spreadsheet would not find it as it is)"))


def is_formula(f: object) -> bool:
    if isinstance(f, str):
        return f.startswith("=")
    # array and data-table formulas come back as objects with a text reference
    return f is not None and type(f).__name__ in ("ArrayFormula", "DataTableFormula")


def _short(v: object, n: int = 40) -> str:
    s = str(v)
    return s if len(s) <= n else s[: n - 1] + "…"


def _merged_problems(spec, title, columns, merges, problems) -> None:
    """Merged cells keep only their top-left value; every other cell reads as blank."""
    by_index = {i: name for name, i in columns.items() if not (spec.name == "Settings" and
                                                                  name == "note")}
    listed = 0
    for ref in sorted(merges):
        try:
            c1, r1, c2, r2 = range_boundaries(ref.replace("$", ""))
        except (ValueError, TypeError):
            continue
        if None in (c1, r1, c2, r2):
            continue
        hidden = sorted({by_index[c] for c in range(c1, min(c2, MAX_COLUMNS) + 1) if c in by_index
                         and (c != c1 or r2 > r1)})
        header = r1 == 1 and c2 > c1
        if not hidden and not header:
            continue
        listed += 1
        if listed > MAX_LISTED:
            continue
        top_left = f"{get_column_letter(c1)}{r1}"
        if header:
            what = f"header cells {ref} are merged; only {top_left} keeps its column name"
        else:
            what = (f"cells {ref} are merged; only {top_left} keeps its value, so "
                    f"{', '.join(hidden)} read as blank there")
        problems.append(Problem(ERROR, title, ref.replace("$", ""), what,
                                "unmerge the cells (Home > Merge & Center) and type a value in "
                                "each cell"))
    if listed > MAX_LISTED:
        problems.append(Problem(ERROR, title, "", f"{listed - MAX_LISTED} more merged ranges",
                                "unmerge all cells of the table"))


# -- public reading API (used by costing.compare and the spreadsheet add-on) -----------------------


def open_workbook(path: str, data_only: bool = True):
    """Open an .xlsx workbook read-only, after the container checks (zip and XML guards).

    Parameters
    ----------
    path : str
        The workbook; never changed.
    data_only : bool
        True: cells give their cached values; False: formulas as text.

    Returns
    -------
    A read-only workbook with ``sheetnames``, ``wb[title]`` and ``close()``.

    Raises
    ------
    InputError
        Not an .xlsx workbook (csv, xls, ods, encrypted, Strict Open XML, damaged, hostile).
    """
    _check_container(path)
    return _open(path, data_only=data_only)
