"""A catalogue of broken and hostile input workbooks. Each one must be refused by
`costing run INPUT -o OUT` with exit code 1 (2 for usage errors), a message that names the
sheet and cell and says what to do, no Python traceback, and no output or temporary file left
behind. A second list holds awkward inputs that are valid and must simply work.

Bad files are built from a good input (the `make_input` fixture) by editing it with openpyxl,
by rewriting one XML part of the zip, or from raw bytes. The data is invented test data."""

from __future__ import annotations

import datetime as dt
import os
import random
import re
import time
import zipfile
from collections.abc import Callable
from dataclasses import dataclass

import openpyxl
import pytest
from openpyxl.chart import BarChart, Reference

from tests.conftest import base_data

# Characters in a cell: Microsoft "Excel specifications and limits" (references.md section 6).
EXCEL_MAX_CELL_CHARS = 32_767
# Rows in a sheet: same source.
EXCEL_MAX_ROWS = 1_048_576


# --------------------------------------------------------------------------- helpers

class Build:
    """What a case's builder gets: the make_input fixture and a folder to write into."""

    def __init__(self, make_input, folder):
        self.make_input = make_input
        self.folder = folder

    def good(self, data: dict | None = None, name: str = "in.xlsx") -> str:
        return self.make_input(data, name)

    def data(self, change: Callable[[dict], None], name: str = "in.xlsx") -> str:
        d = base_data()
        change(d)
        return self.make_input(d, name)

    def edit(self, change: Callable[[openpyxl.Workbook], None], data: dict | None = None,
             name: str = "in.xlsx") -> str:
        """A good input, loaded with openpyxl, changed, and saved again."""
        path = self.good(data, name)
        wb = openpyxl.load_workbook(path)
        change(wb)
        wb.save(path)
        return path

    def raw(self, content: bytes, name: str) -> str:
        path = os.path.join(self.folder, name)
        with open(path, "wb") as f:
            f.write(content)
        return path


def rewrite_parts(path: str, change: Callable[[str, bytes], bytes | None]) -> str:
    """Rewrite the zip at `path`: change(name, bytes) returns new bytes, or None to drop it."""
    with zipfile.ZipFile(path) as z:
        parts = [(i.filename, z.read(i.filename)) for i in z.infolist()]
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts:
            new = change(name, data)
            if new is not None:
                z.writestr(name, new)
    return path


def sheet_part(path: str, title: str) -> str:
    """The zip member that holds the worksheet called `title`."""
    with zipfile.ZipFile(path) as z:
        book = z.read("xl/workbook.xml").decode()
        rels = z.read("xl/_rels/workbook.xml.rels").decode()
    rid = re.search(f'<sheet [^>]*name="{re.escape(title)}"[^>]*r:id="([^"]+)"', book).group(1)
    rel = next(r for r in re.findall(r"<Relationship [^>]*>", rels) if f'Id="{rid}"' in r)
    target = re.search(r'Target="([^"]+)"', rel).group(1)
    return target.lstrip("/") if target.startswith("/") else "xl/" + target


def replace_in_xml(path: str, old: str, new: str) -> str:
    """Replace text `old` (written as a sentinel value) in whichever XML part holds it."""
    hits = []

    def change(name, data):
        if name.endswith(".xml") and old.encode() in data:
            hits.append(name)
            return data.replace(old.encode(), new.encode())
        return data

    rewrite_parts(path, change)
    assert hits, f"sentinel {old!r} not found"
    return path


def add_rows_to_sheet(path: str, title: str, rows_xml: str) -> str:
    part = sheet_part(path, title)

    def change(name, data):
        if name == part:
            return data.replace(b"</sheetData>", rows_xml.encode() + b"</sheetData>", 1)
        return data

    return rewrite_parts(path, change)


def ole_header() -> bytes:
    # The compound-file signature that .xls files and encrypted .xlsx files start with.
    return b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(504) + b"\x00" * 1024


def ole_file(streams: list[str]) -> bytes:
    """A minimal OLE2 compound file holding empty streams with these names, laid out as
    [MS-CFB] (Compound File Binary File Format) sections 2.2 (header), 2.3 (FAT) and 2.6
    (directory entries) describe: version 3, 512-byte sectors; sector 0 is the FAT, sector 1
    the directory (root entry plus up to 3 streams). Written here, independently of the reader."""
    import struct

    assert len(streams) <= 3
    free, end, fat_sect, nostream = 0xFFFFFFFF, 0xFFFFFFFE, 0xFFFFFFFD, 0xFFFFFFFF
    header = struct.pack("<8s16sHHHHH6sIIIIIIIII", b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1", bytes(16),
                         0x3E, 3, 0xFFFE, 9, 6, bytes(6), 0, 1, 1, 0, 4096, end, 0, end, 0)
    header += struct.pack("<109I", 0, *([free] * 108))
    fat = struct.pack("<128I", fat_sect, end, *([free] * 126))

    def entry(name: str, kind: int, child: int, right: int) -> bytes:
        raw = (name + "\0").encode("utf-16-le")
        return struct.pack("<64sHBBIII16sIQQIQ", raw, len(raw), kind, 1, nostream, right, child,
                           bytes(16), 0, 0, 0, end, 0)

    names = streams
    entries = [entry("Root Entry", 5, 1 if names else nostream, nostream)]
    for i, name in enumerate(names, start=1):
        entries.append(entry(name, 2, nostream, i + 1 if i < len(names) else nostream))
    directory = b"".join(entries).ljust(512, b"\0")
    assert len(header) == 512 and len(fat) == 512
    return header + fat + directory


def zip_of(parts: dict[str, bytes]) -> bytes:
    import io

    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts.items():
            z.writestr(name, data)
    return buf.getvalue()


def set_cell(sheet: str, ref: str, value):
    def change(wb):
        wb[sheet][ref] = value
    return change


def run_cli(cli, path: str, folder) -> tuple[int, str, str, str]:
    out = os.path.join(folder, "costed.xlsx")
    code, stdout, stderr = cli("run", path, "-o", out)
    return code, stdout, stderr, out


def assert_clean_refusal(code, stdout, stderr, out, folder, expected_code=1):
    assert code == expected_code, (code, stdout, stderr)
    assert "Traceback" not in stdout + stderr, stderr
    assert not os.path.exists(out), "nothing may be written when the input has errors"
    leftovers = [f for f in os.listdir(folder) if f.startswith(".costing-")]
    assert not leftovers, leftovers


def assert_reported(stderr: str, where: str, words: tuple[str, ...]):
    """Some `error:` line names `where` (Sheet!Cell, a sheet, or `workbook`), holds every word
    and ends with the fix in brackets."""
    lines = [ln for ln in stderr.splitlines() if ln.startswith(f"error: {where}:")]
    assert lines, f"no error at {where}:\n{stderr}"
    good = [ln for ln in lines if all(w.lower() in ln.lower() for w in words)]
    assert good, f"no error at {where} mentions {words}:\n" + "\n".join(lines)
    assert all(re.search(r"\(.+\)$", ln) for ln in good), f"no fix given:\n{good}"


# --------------------------------------------------------------------------- the catalogue

@dataclass
class Case:
    id: str
    build: Callable[[Build], str]
    where: str  # Sheet!Cell, sheet, or "workbook"
    words: tuple[str, ...]
    code: int = 1


def _truncated(b: Build) -> str:
    good = open(b.good(), "rb").read()
    return b.raw(good[: len(good) // 2], "truncated.xlsx")


def _corrupted(b: Build) -> str:
    """A good workbook whose packed data is overwritten in the middle: the zip directory
    still lists every part, but a part no longer unpacks."""
    path = b.good()
    with zipfile.ZipFile(path) as z:
        info = z.getinfo(sheet_part(path, "Lanes"))
    data = bytearray(open(path, "rb").read())
    start = info.header_offset + 30 + len(info.filename.encode()) + 4
    for i in range(start, start + min(40, info.compress_size - 8)):
        data[i] ^= 0x5A
    return b.raw(bytes(data), "corrupted.xlsx")


def _random_bytes(b: Build) -> str:
    rnd = random.Random(20260101)
    return b.raw(bytes(rnd.getrandbits(8) for _ in range(4096)), "random.xlsx")


def _ods(b: Build) -> str:
    return b.raw(zip_of({"mimetype": b"application/vnd.oasis.opendocument.spreadsheet",
                         "content.xml": b"<office:document-content/>",
                         "META-INF/manifest.xml": b"<manifest/>"}), "in.ods")


def _xlsb(b: Build) -> str:
    return b.raw(zip_of({"[Content_Types].xml": b"<Types/>", "xl/workbook.bin": b"\x83\x01\x00",
                         "xl/worksheets/sheet1.bin": b"\x00"}), "in.xlsb")


def _drop_part(b: Build) -> str:
    path = b.good()
    part = sheet_part(path, "Lanes")
    return rewrite_parts(path, lambda n, d: None if n == part else d)


def _drop_relationship(b: Build) -> str:
    path = b.good()
    part = sheet_part(path, "Rates")
    target = part.removeprefix("xl/")

    def change(name, data):
        if name == "xl/_rels/workbook.xml.rels":
            return re.sub(rf'<Relationship [^>]*Target="/?(?:xl/)?{re.escape(target)}"[^>]*/>'.encode(),
                          b"", data)
        return data
    return rewrite_parts(path, change)


# ISO/IEC 29500-1 Strict uses these namespaces in place of the transitional ones (ECMA-376 Part 1,
# strict conformance class; from memory).
STRICT_NAMESPACES = {
    b"http://schemas.openxmlformats.org/spreadsheetml/2006/main":
        b"http://purl.oclc.org/ooxml/spreadsheetml/main",
    b"http://schemas.openxmlformats.org/officeDocument/2006/relationships":
        b"http://purl.oclc.org/ooxml/officeDocument/relationships",
}


def _strict(b: Build) -> str:
    def change(name, data):
        for old, new in STRICT_NAMESPACES.items():
            data = data.replace(old, new)
        return data
    return rewrite_parts(b.good(), change)


def _bad_xml(b: Build) -> str:
    path = b.good()
    part = sheet_part(path, "Lanes")
    return rewrite_parts(path, lambda n, d: d[: len(d) * 2 // 3] if n == part else d)


def _remove_sheet(title):
    def change(wb):
        wb.remove(wb[title])
    return change


def _only_junk_sheet(wb):
    for title in list(wb.sheetnames):
        if title != "Settings":
            wb.remove(wb[title])
    wb["Settings"].title = "Sheet1"


def _rename(old, new):
    def change(wb):
        wb[old].title = new
    return change


def _chart_sheet(wb):
    idx = wb.sheetnames.index("Lanes")
    wb.remove(wb["Lanes"])
    cs = wb.create_chartsheet("Lanes", idx)
    chart = BarChart()
    chart.add_data(Reference(wb["Depots"], min_col=3, min_row=1, max_row=5), titles_from_data=True)
    cs.add_chart(chart)


def _two_shipment_sheets(wb):
    ws = wb.create_sheet("SHIPMENTS ")
    ws.append(["shipment_id", "origin", "destination", "weight_t"])


def _clear_sheet(title):
    def change(wb):
        ws = wb[title]
        ws.delete_rows(1, ws.max_row)
    return change


def _delete_header(wb):
    wb["Lanes"].delete_rows(1)


def _header_in_row_3(wb):
    ws = wb["Lanes"]
    ws.insert_rows(1, 2)
    ws["A1"] = "Lanes, week 14"


def _delete_column(title, idx):
    def change(wb):
        wb[title].delete_cols(idx)
    return change


def _merge(title, ref):
    def change(wb):
        wb[title].merge_cells(ref)
    return change


def _add_tariffs(bands):
    """Add a Tariffs sheet with one row per (min_kg, max_kg) band of one carrier and zone pair."""
    def change(d):
        d["Tariffs"] = [{"carrier": "Brindle", "from_zone": "A", "to_zone": "C", "min_kg": lo,
                         "max_kg": hi, "price_per_100kg": 10} for lo, hi in bands]
    return change


def _set(sheet, key_col, key, col, value):
    """Change one value of the base data, in the row whose key_col is key."""
    def change(d):
        for row in d[sheet]:
            if row.get(key_col) == key:
                row[col] = value
                return
        raise KeyError(key)
    return change


def _sentinel(sheet, key_col, key, col, sentinel, replacement):
    def build(b: Build) -> str:
        path = b.data(_set(sheet, key_col, key, col, sentinel))
        return replace_in_xml(path, str(sentinel), replacement)
    return build


def _append(sheet, row):
    def change(d):
        d[sheet].append(row)
    return change


def _rows_beyond_limit(b: Build) -> str:
    r = EXCEL_MAX_ROWS + 2
    return add_rows_to_sheet(b.good(), "Lanes",
                             f'<row r="{r}"><c r="A{r}" t="inlineStr"><is><t>L9</t></is></c></row>')


def _missing_file(b: Build) -> str:
    return os.path.join(b.folder, "no-such-input.xlsx")


def _folder(b: Build) -> str:
    path = os.path.join(b.folder, "a-folder.xlsx")
    os.mkdir(path)
    return path


def _formula_id(wb):
    wb["Depots"]["A2"] = '="A"&""'


def _unpaid(d):
    d["Settings"].append({"setting": "currency", "value": "GBP"})


CASES: list[Case] = [
    # ---- a part whose XML declaration names an encoding that does not exist (found by the fuzz
    # test: encoding="AUTF-8" raised LookupError, which the reader did not catch)
    Case("unknown_xml_encoding", lambda b: rewrite_parts(b.good(), lambda n, d: d.replace(
        b'encoding="UTF-8"', b'encoding="AUTF-8"') if n == "[Content_Types].xml" else d),
         "workbook", ("text encoding that does not exist", "AUTF-8")),
    # ---- not a workbook at all
    Case("csv_text", lambda b: b.raw(b"depot_id,name\nA,Alpha\n", "depots.csv"), "workbook",
         ("text/CSV", "save it as Excel Workbook")),
    Case("csv_named_xlsx", lambda b: b.raw(b"lane_id;from_depot\nL1;A\n", "in.xlsx"), "workbook",
         ("a text file (CSV?) named .xlsx",)),
    # [MS-XLS] 2.1.2: a BIFF8 workbook is the stream "Workbook" (BIFF5: "Book") of a compound file
    Case("xls_ole", lambda b: b.raw(ole_file(["Workbook"]), "old.xls"), "workbook",
         ("old-style binary .xls", "save it as Excel Workbook")),
    Case("xls_renamed_xlsx", lambda b: b.raw(ole_file(["Workbook", "\x05SummaryInformation"]),
                                             "renamed.xlsx"), "workbook",
         ("old-style binary .xls workbook, named .xlsx", "save it as Excel Workbook (.xlsx)")),
    Case("biff5_renamed_xlsx", lambda b: b.raw(ole_file(["Book"]), "old95.xlsx"), "workbook",
         ("old-style binary .xls",)),
    # [MS-OFFCRYPTO] 2.3.4.4: an encrypted package keeps EncryptionInfo and EncryptedPackage streams
    Case("encrypted_xlsx", lambda b: b.raw(ole_file(["EncryptionInfo", "EncryptedPackage"]),
                                           "locked.xlsx"), "workbook",
         ("password-protected", "remove the password")),
    Case("ole_not_a_workbook", lambda b: b.raw(ole_file(["WordDocument"]), "memo.xlsx"), "workbook",
         ("compound file", "no workbook")),
    Case("ole_header_only", lambda b: b.raw(ole_header(), "odd.xlsx"), "workbook",
         ("old-style .xls workbook or a password-protected one",)),
    Case("ods", _ods, "workbook", ("OpenDocument",)),
    Case("xlsb", _xlsb, "workbook", (".xlsb",)),
    Case("empty_file", lambda b: b.raw(b"", "empty.xlsx"), "workbook", ("empty (0 bytes)",)),
    Case("truncated_xlsx", _truncated, "workbook", ("damaged",)),
    Case("corrupted_zip", _corrupted, "workbook", ("damaged", "ask for it again")),
    Case("random_bytes", _random_bytes, "workbook", ("not an .xlsx workbook",)),
    Case("zip_not_workbook", lambda b: b.raw(zip_of({"readme.txt": b"hello"}), "in.xlsx"),
         "workbook", ("zip file but not an .xlsx",)),
    # openpyxl drops a sheet whose part is missing from the zip; it is reported as damage
    Case("sheet_part_missing", _drop_part, "Lanes", ("damaged", "lists sheet 'Lanes'", "missing",
                                                       "save the workbook again")),
    Case("sheet_relationship_missing", _drop_relationship, "Rates",
         ("damaged", "lists sheet 'Rates'", "relationship")),
    Case("strict_open_xml", _strict, "workbook", ("Strict Open XML", "save it as Excel Workbook")),
    Case("sheet_xml_cut_short", _bad_xml, "Lanes", ("could not be read",)),
    Case("folder_as_input", _folder, "workbook", ("folder",)),
    Case("missing_file", _missing_file, "", ("not found",), code=2),
    # ---- sheets
    Case("missing_sheet", lambda b: b.edit(_remove_sheet("Depots")), "Depots",
         ("sheet Depots is missing", "add a sheet named Depots")),
    Case("only_a_junk_sheet", lambda b: b.edit(_only_junk_sheet), "Shipments",
         ("missing",)),
    Case("renamed_sheet", lambda b: b.edit(_rename("Lanes", "Lanez")), "Lanes",
         ("missing", "rename sheet 'Lanez' to Lanes")),
    Case("renamed_sheet_suffix", lambda b: b.edit(_rename("Rates", "RATES (2)")), "Rates",
         ("missing", "rename sheet 'RATES (2)' to Rates")),
    Case("chart_sheet", lambda b: b.edit(_chart_sheet), "Lanes", ("chart sheet",)),
    Case("two_sheets_one_name", lambda b: b.edit(_two_shipment_sheets), "'SHIPMENTS '",
         ("could each be the Shipments sheet",)),
    Case("empty_sheet", lambda b: b.edit(_clear_sheet("Rates")), "Rates!A1", ("no header row",)),
    Case("header_row_missing", lambda b: b.edit(_delete_header), "Lanes!A1",
         ("header row seems to be missing", "insert a row 1")),
    Case("header_in_row_3", lambda b: b.edit(_header_in_row_3), "Lanes!A3",
         ("row 3, not row 1", "delete rows 1 to 2")),
    Case("rows_beyond_sheet_limit", _rows_beyond_limit, f"Lanes!A{EXCEL_MAX_ROWS}",
         ("1,048,576",)),
    # ---- columns
    Case("required_column_missing", lambda b: b.edit(_delete_column("Rates", 3)), "Rates!1:1",
         ("required column per_km is missing", "add a column headed per_km")),
    Case("misspelt_header", lambda b: b.edit(set_cell("Lanes", "E1", "Distanse km")), "Lanes!E1",
         ("did you mean distance_km",)),
    Case("misspelt_required_header", lambda b: b.edit(set_cell("Lanes", "B1", "from depo")),
         "Lanes!B1", ("did you mean from_depot",)),
    Case("duplicate_header", lambda b: b.edit(set_cell("Lanes", "M1", "Distance km")), "Lanes!M1",
         ("appears twice", "E1")),
    Case("merged_header", lambda b: b.edit(_merge("Lanes", "B1:C1")), "Lanes!B1:C1",
         ("header cells B1:C1 are merged",)),
    # ---- cells: blanks, merges, formulas
    Case("blank_required_cell", lambda b: b.data(_set("Lanes", "lane_id", "L2", "mode", None)),
         "Lanes!D3", ("mode is blank", "fill in mode")),
    Case("blank_weight", lambda b: b.data(_set("Shipments", "shipment_id", "S1", "weight_t", None)),
         "Shipments!D2", ("weight_t is blank", "tonnes")),
    Case("blank_id", lambda b: b.data(_set("Depots", "depot_id", "B", "depot_id", None)),
         "Depots!A3", ("depot_id is blank",)),
    Case("merged_required_cells", lambda b: b.edit(_merge("Lanes", "B3:C3")), "Lanes!B3:C3",
         ("merged", "to_depot", "unmerge")),
    Case("merged_down_a_column", lambda b: b.edit(_merge("Shipments", "A3:A4")), "Shipments!A3:A4",
         ("merged", "shipment_id")),
    Case("formula_without_result", lambda b: b.edit(set_cell("Lanes", "G2", "=2+3")), "Lanes!G2",
         ("formula with no saved result",)),
    Case("formula_in_id", lambda b: b.edit(_formula_id), "Depots!A2",
         ("formula with no saved result",)),
    Case("error_value", lambda b: b.edit(set_cell("Lanes", "E2", "#DIV/0!")), "Lanes!E2",
         ("#DIV/0!", "correct the formula")),
    # ---- numbers that are not numbers
    Case("number_as_text", lambda b: b.data(_set("Shipments", "shipment_id", "S1", "weight_t", "12.5")),
         "Shipments!D2", ("text '12.5'", "type 12.5 as a number")),
    Case("thousands_and_unit", lambda b: b.data(_set("Lanes", "lane_id", "L3", "distance_km",
                                                     "1,200 km")),
         "Lanes!E4", ("'1,200 km'", "type 1200 as a number")),
    Case("decimal_comma", lambda b: b.data(_set("Rates", "vehicle", "truck", "per_km", "1,15")),
         "Rates!C2", ("type 1.15 as a number",)),
    Case("degrees_minutes", lambda b: b.data(_set("Depots", "depot_id", "A", "latitude", "52°30'N")),
         "Depots!C2", ("type 52.5 (decimal degrees)",)),
    Case("date_in_number", lambda b: b.edit(set_cell("Lanes", "F2", dt.datetime(2026, 3, 1))),
         "Lanes!F2", ("date", "format the cell as Number")),
    Case("boolean_in_number", lambda b: b.edit(set_cell("Rates", "C2", True)), "Rates!C2",
         ("TRUE/FALSE",)),
    Case("duration_in_hours", lambda b: b.edit(set_cell("Lanes", "F2", dt.timedelta(hours=2.5))),
         "Lanes!F2", ("duration", "here 2.5")),
    # openpyxl cannot store NaN or infinity: it writes the cell with an empty <v/>, which reads
    # back as blank. So a NaN typed through openpyxl arrives as a blank cell ...
    Case("nan_via_openpyxl", lambda b: b.edit(set_cell("Rates", "C2", float("nan"))), "Rates!C2",
         ("per_km is blank",)),
    # ... while a file written by other means can put NaN or INF in the XML (openpyxl alone would
    # fail on the whole sheet: it reads a number without '.' or 'E' as an int). Each is named at
    # its cell, as 1E+400 (read as infinity) is. Python's float() spellings of NaN and infinity.
    Case("nan_in_xml", _sentinel("Shipments", "shipment_id", "S1", "weight_t", 987654.25, "NaN"),
         "Shipments!D2", ("not a finite number", "type the weight_t")),
    Case("inf_in_xml", _sentinel("Lanes", "lane_id", "L1", "distance_km", 987654.25, "INF"),
         "Lanes!E2", ("not a finite number",)),
    Case("minus_inf_in_xml", _sentinel("Rates", "vehicle", "truck", "per_km", 987654.25, "-Infinity"),
         "Rates!C2", ("not a finite number",)),
    Case("nan_in_latitude", _sentinel("Depots", "depot_id", "B", "latitude", 987654.25, "nan"),
         "Depots!C3", ("not a finite number",)),
    Case("overflow_in_xml", _sentinel("Rates", "vehicle", "truck", "per_hour", 987654.25, "1E+400"),
         "Rates!D2", ("not a finite number",)),
    Case("huge_integer_in_xml", _sentinel("Rates", "vehicle", "truck", "per_trip", 987654.25,
                                          "1" + "0" * 400),
         "Rates!E2", ("far too large (401 digits)",)),
    # ---- ADR tunnel restrictions (issue 12): codes per ADR 8.6, categories A to E (1.9.5) [V-2ND]
    Case("tunnel_code_f", lambda b: b.data(_set("Shipments", "shipment_id", "S1", "tunnel_code", "F")),
         "Shipments!P2", ("not an ADR tunnel restriction code", "D/E")),
    Case("tunnel_category_f", lambda b: b.data(_set("Lanes", "lane_id", "L1", "tunnel_category", "F")),
         "Lanes!O2", ("tunnel_category 'F' is not one of A, B, C, D, E",)),
    # ---- numbers out of range
    Case("negative_distance", lambda b: b.data(_set("Lanes", "lane_id", "L1", "distance_km", -80)),
         "Lanes!E2", ("negative", "at least 0")),
    Case("negative_weight", lambda b: b.data(_set("Shipments", "shipment_id", "S2", "weight_t", -5)),
         "Shipments!D3", ("negative",)),
    Case("lane_40000_km", lambda b: b.data(_set("Lanes", "lane_id", "L3", "distance_km", 40000)),
         "Lanes!E4", ("above 25000",)),
    Case("latitude_95", lambda b: b.data(_set("Depots", "depot_id", "B", "latitude", 95)),
         "Depots!C3", ("above 90",)),
    Case("longitude_minus_200", lambda b: b.data(_set("Depots", "depot_id", "B", "longitude", -200)),
         "Depots!D3", ("below -180",)),
    Case("absurd_rate", lambda b: b.data(_set("Rates", "vehicle", "truck", "per_km", 1e15)),
         "Rates!C2", ("implausibly large",)),
    Case("payload_zero", lambda b: b.data(_set("Rates", "vehicle", "truck", "payload_t", 0)),
         "Rates!F2", ("payload_t is 0",)),
    Case("payload_in_kg", lambda b: b.data(_set("Rates", "vehicle", "truck", "payload_t", 0.002)),
         "Rates!F2", ("typed in kg",)),
    # ---- ids and references
    Case("duplicate_depot", lambda b: b.data(_set("Depots", "depot_id", "B", "depot_id", "A")),
         "Depots!A3", ("duplicate depot 'A'", "row 2")),
    Case("duplicate_lane", lambda b: b.data(_set("Lanes", "lane_id", "L2", "lane_id", "L1")),
         "Lanes!A3", ("duplicate lane",)),
    Case("duplicate_shipment", lambda b: b.data(_set("Shipments", "shipment_id", "S3", "shipment_id",
                                                     "S1")),
         "Shipments!A4", ("duplicate shipment",)),
    Case("duplicate_rate_card", lambda b: b.data(_append("Rates", dict(base_data()["Rates"][0]))),
         "Rates!A3", ("duplicate rate card for truck on road",)),
    # ids are told apart by case here but not by spreadsheet lookups (MATCH, VLOOKUP: "not case
    # sensitive", Microsoft's function reference; from memory): a likely typo, naming both cells
    Case("depot_ids_differ_in_case", lambda b: b.data(_append("Depots", {
        "depot_id": "b ", "name": "Bravo again", "latitude": 52.5, "longitude": 5.5})),
         "Depots!A6", ("depot 'b' differs from depot 'B' (A3) only in upper/lower case",
                       "use one spelling")),
    Case("unknown_depot_in_lane", lambda b: b.data(_set("Lanes", "lane_id", "L1", "to_depot", "BB")),
         "Lanes!C2", ("'BB' is not a depot_id", "did you mean B")),
    Case("unknown_origin", lambda b: b.data(_set("Shipments", "shipment_id", "S2", "origin", "Z9")),
         "Shipments!B3", ("'Z9' is not a depot_id",)),
    Case("unknown_vehicle", lambda b: b.data(_set("Shipments", "shipment_id", "S1", "vehicle",
                                                  "truk")),
         "Shipments!E2", ("'truk' has no rate card", "did you mean truck")),
    Case("lane_to_itself", lambda b: b.data(_set("Lanes", "lane_id", "L2", "to_depot", "B")),
         "Lanes!C3", ("from B to itself",)),
    Case("long_id", lambda b: b.data(_set("Depots", "depot_id", "D", "depot_id", "D" * 40_000)),
         "Depots!A5", ("characters long", "at most 200")),
    # ---- choices
    Case("unknown_mode", lambda b: b.data(_set("Lanes", "lane_id", "L1", "mode", "truck")),
         "Lanes!D2", ("'truck' is not one of",)),
    Case("yes_no_maybe", lambda b: b.data(_set("Lanes", "lane_id", "L1", "two_way", "maybe")),
         "Lanes!I2", ("not yes or no",)),
    Case("unknown_kind", lambda b: b.data(_set("Depots", "depot_id", "A", "kind", "warehouse")),
         "Depots!E2", ("'warehouse' is not one of",)),
    Case("unknown_objective", lambda b: b.data(_set("Shipments", "shipment_id", "S1", "objective",
                                                    "cheapest")),
         "Shipments!F2", ("not one of",)),
    # ---- settings
    Case("detour_factor_half", lambda b: b.data(_set("Settings", "setting", "detour_factor", "value",
                                                     0.5)),
         "Settings!B4", ("detour_factor is below 1 (0.5)",)),
    Case("currency_EURO", lambda b: b.data(_set("Settings", "setting", "currency", "value", "EURO")),
         "Settings!B2", ("not an ISO 4217 code",)),
    Case("setting_twice", lambda b: b.data(_unpaid), "Settings!A6", ("given twice",)),
    Case("objective_setting", lambda b: b.data(_set("Settings", "setting", "objective", "value",
                                                    "fastest")),
         "Settings!B3", ("not one of",)),
    Case("speed_as_word", lambda b: b.data(_set("Settings", "setting", "default_speed_kmh", "value",
                                                "fast")),
         "Settings!B5", ("default_speed_kmh holds the text 'fast'",)),
    Case("no_rate_cards", lambda b: b.data(lambda d: d.update(Rates=[])), "Rates!A2",
         ("no rate cards",)),
    # ---- carrier tariffs: two prices for one weight
    Case("tariff_bands_overlap", lambda b: b.data(_add_tariffs([(0, 1000), (900, None)])), "Tariffs!D3",
         ("overlaps row 2", "without overlapping")),
]


def test_catalogue_is_big_enough():
    assert len(CASES) >= 45
    assert len({c.id for c in CASES}) == len(CASES)


@pytest.mark.parametrize("case", CASES, ids=[c.id for c in CASES])
def test_bad_workbook_is_refused(case, cli, make_input, tmp_path):
    folder = tmp_path / "work"
    folder.mkdir()
    path = case.build(Build(make_input, str(tmp_path)))
    t0 = time.process_time()
    code, stdout, stderr, out = run_cli(cli, path, folder)
    assert time.process_time() - t0 < 10
    assert_clean_refusal(code, stdout, stderr, out, folder, case.code)
    if case.code == 2:
        assert all(w in stderr for w in case.words), stderr
    else:
        assert_reported(stderr, case.where, case.words)


# --------------------------------------------------------------------------- awkward but valid

def _unicode_data():
    d = base_data()
    names = {"A": ("Αθήνα", "Αθήνα λιμάνι"), "B": ("北京", "北京物流中心"), "C": ("🚚-Ω", "Depot 🚚📦")}
    for dep in d["Depots"]:
        if dep["depot_id"] in names:
            dep["depot_id"], dep["name"] = names[dep["depot_id"]]
    for lane in d["Lanes"]:
        for end in ("from_depot", "to_depot"):
            lane[end] = names.get(lane[end], (lane[end],))[0]
    for s in d["Shipments"]:
        for end in ("origin", "destination"):
            s[end] = names.get(s[end], (s[end],))[0]
        s["customer"] = "Ölçüm & Söhne — 顧客"
    return d


def test_unicode_names_work(cli, make_input, tmp_path):
    inp = make_input(_unicode_data())
    code, stdout, stderr, out = run_cli(cli, inp, tmp_path)
    assert code == 0, stderr
    assert "2 of 3 shipments routed" in stdout
    wb = openpyxl.load_workbook(out, read_only=True)
    summary = repr(list(wb["Summary"].iter_rows(values_only=True)))
    wb.close()
    assert "'Αθήνα', '🚚-Ω'" in summary  # origin and destination of S1
    assert "Ölçüm & Söhne — 顧客" in summary
    code, stdout, _ = cli("check", inp)
    assert code == 0 and "北京" not in stdout  # nothing to report about the hub


def test_forty_thousand_character_name_does_not_crash(cli, make_input, tmp_path):
    """A name longer than a cell can hold (32,767 characters; Microsoft "Excel specifications
    and limits"): openpyxl and xlsxwriter cut such text when they write it, so it is put into
    the XML directly. The run works, says the name is cut short, and writes the output."""
    d = base_data()
    d["Depots"][0]["name"] = "LONGNAME-SENTINEL"
    inp = replace_in_xml(make_input(d), "LONGNAME-SENTINEL", "Ä" * 40_000)
    code, stdout, stderr, out = run_cli(cli, inp, tmp_path)
    assert code == 0, stderr
    assert "Traceback" not in stderr
    assert "Depots!B2" in stderr and f"{EXCEL_MAX_CELL_CHARS:,}" in stderr
    assert os.path.exists(out)


def _add_empty_shared_string(path: str) -> int:
    """Append an empty string to the shared-string table; returns its index."""
    index = []

    def change(name, data):
        if name == "xl/sharedStrings.xml":
            text = data.decode()
            index.append(text.count("<si>"))
            text = re.sub(r'(count|uniqueCount)="(\d+)"', lambda m: f'{m[1]}="{int(m[2]) + 1}"', text)
            return text.replace("</sst>", "<si><t></t></si></sst>").encode()
        return data

    rewrite_parts(path, change)
    return index[0]


def _empty_text_rows(path: str, first: int, count: int, columns: int) -> str:
    """Rows of empty text cells, as a spreadsheet application stores them (shared strings)."""
    s = _add_empty_shared_string(path)
    letters = [openpyxl.utils.get_column_letter(c) for c in range(1, columns + 1)]
    return "".join(f'<row r="{r}">' + "".join(f'<c r="{c}{r}" t="s"><v>{s}</v></c>' for c in letters)
                   + "</row>" for r in range(first, first + count))


def _styled_rows(path: str, first: int, count: int, columns: int) -> str:
    """Rows that hold formatting only: a style on the row and on every cell."""
    letters = [openpyxl.utils.get_column_letter(c) for c in range(1, columns + 1)]
    return "".join(f'<row r="{r}" s="1" customFormat="1">' + "".join(f'<c r="{c}{r}" s="1"/>'
                                                                       for c in letters) + "</row>"
                   for r in range(first, first + count))


@pytest.mark.parametrize("rows", [_empty_text_rows, _styled_rows], ids=["empty_text", "formatting"])
def test_thirty_thousand_blank_rows_are_quick(rows, cli, make_input, tmp_path):
    """30,000 rows of empty text cells, or of formatting only, below the Lanes data (12
    columns each: 360,000 cells)."""
    inp = make_input()
    inp = add_rows_to_sheet(inp, "Lanes", rows(inp, 6, 30_000, 12))
    t0 = time.process_time()  # CPU time: steadier than the wall clock on a busy machine
    code, stdout, stderr, out = run_cli(cli, inp, tmp_path)
    seconds = time.process_time() - t0
    assert code == 0, stderr
    assert "2 of 3 shipments routed" in stdout
    assert seconds < 15, f"{seconds:.1f} s of CPU (about 2 to 3 s on an idle machine)"


def test_lying_dimension_is_ignored(cli, make_input, tmp_path):
    """A sheet that claims to span A1:XFD1048576 (the whole grid) is read by its real rows."""
    inp = make_input()
    part = sheet_part(inp, "Lanes")
    rewrite_parts(inp, lambda n, d: re.sub(rb'<dimension ref="[^"]*"', b'<dimension ref="A1:XFD1048576"', d)
                  if n == part else d)
    t0 = time.process_time()
    code, stdout, stderr, out = run_cli(cli, inp, tmp_path)
    assert code == 0, stderr
    assert time.process_time() - t0 < 5


def test_unknown_setting_is_only_a_warning(cli, make_input, tmp_path):
    d = base_data()
    d["Settings"].append({"setting": "detour_factr", "value": 1.3})
    code, stdout, stderr, out = run_cli(cli, make_input(d), tmp_path)
    assert code == 0, stderr
    assert "warning: Settings!A6: unknown setting 'detour_factr' is ignored (did you mean " \
           "detour_factor?)" in stderr


def test_swapped_coordinates_are_a_warning(cli, make_input, tmp_path):
    """Latitude 5.0, longitude 52.0 is a valid place (in the Gulf of Guinea region's
    latitudes, far east), so it is not an error. The lanes from that depot are then far
    shorter than the straight line, which the validator reports, naming the swap."""
    d = base_data()
    d["Depots"][0]["latitude"], d["Depots"][0]["longitude"] = 5.0, 52.0
    code, stdout, stderr, out = run_cli(cli, make_input(d), tmp_path)
    assert code == 0, stderr
    assert "warning: Lanes!E2:" in stderr
    assert "the latitude and longitude of A (Depots row 2) look swapped" in stderr


def test_xlsx_under_another_extension_is_read(cli, make_input, tmp_path):
    inp = make_input(name="in.xls")
    code, stdout, stderr, out = run_cli(cli, inp, tmp_path)
    assert code == 0, stderr
    assert "name ends in '.xls'" in stderr


def test_sheet_and_header_spellings_are_forgiven(cli, make_input, tmp_path):
    def change(wb):
        lanes = wb["Lanes"]
        lanes.title = "tmp"  # openpyxl renames "Lanes" to "LANES1" in one step (case clash)
        lanes.title = "LANES"
        wb["Shipments"].title = " shipments"
        lanes["E1"] = "Distance (km)"
        lanes["A1"] = "Lane-ID"
        wb["Depots"]["H1"] = "my notes"
    inp = Build(make_input, str(tmp_path)).edit(change)
    code, stdout, stderr, out = run_cli(cli, inp, tmp_path)
    assert code == 0, stderr
    assert "2 of 3 shipments routed" in stdout
    assert "column 'my notes' is not used" in stderr


def test_depot_without_coordinates_works(cli, make_input, tmp_path):
    """Blank coordinates are allowed (a warning): the search bound for that depot is 0 (design
    notes, "A* as the product uses it"). Found by the fuzz test: a depot row with only its id."""
    d = base_data()
    d["Depots"].append({"depot_id": "Z9", "name": "no coordinates yet"})
    code, stdout, stderr, out = run_cli(cli, make_input(d), tmp_path)
    assert "Traceback" not in stderr
    assert code == 0, stderr
    assert "warning: Depots!C6: latitude is blank" in stderr
