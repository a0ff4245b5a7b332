"""Hostile workbooks: XML entity expansion ("billion laughs", external entities) and zip
bombs. Each is refused quickly (well under 5 s), with bounded memory, exit code 1, a clear
message, no traceback and no output file."""

from __future__ import annotations

import os
import re
import resource
import struct
import time
import zipfile
import zlib

import openpyxl
import pytest

from costing.workbook import reader
from tests.test_bad_workbooks import assert_clean_refusal, run_cli, sheet_part

MB = 1 << 20


def test_openpyxl_parses_with_defusedxml():
    # defusedxml is a dependency; with it openpyxl refuses entity declarations.
    assert openpyxl.DEFUSEDXML is True


# --------------------------------------------------------------------------- entity expansion

def _laughs(root: str) -> str:
    """A DOCTYPE whose entity lol9 expands to 10^9 copies of "lol" (about 3 GB)."""
    ents = ['<!ENTITY lol "lol">'] + [
        f'<!ENTITY lol{i} "{("&lol%s;" % ("" if i == 1 else i - 1)) * 10}">' for i in range(1, 10)]
    return f"<!DOCTYPE {root} [{''.join(ents)}]>"


def _xxe(root: str) -> str:
    return f'<!DOCTYPE {root} [<!ENTITY xxe SYSTEM "file:///etc/hostname">]>'


def _inject(path: str, part: str, root: str, doctype: str, entity: str) -> None:
    with zipfile.ZipFile(path) as z:
        parts = [(i.filename, z.read(i.filename)) for i in z.infolist()]
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts:
            if name == part:
                text = data.decode()
                i = text.index(f"<{root}")
                text = text[:i] + doctype + text[i:]
                # use the entity where text is allowed
                if root == "sst":
                    text = text.replace("<t>Alpha</t>", f"<t>&{entity};</t>", 1)
                elif root == "worksheet":
                    text = text.replace("</sheetData>", f'<row r="90"><c r="A90" t="inlineStr"><is><t>'
                                        f"&{entity};</t></is></c></row></sheetData>", 1)
                data = text.encode()
            z.writestr(name, data)


@pytest.mark.parametrize("kind", ["laughs", "xxe"])
@pytest.mark.parametrize("where", ["sharedStrings", "sheet", "workbook"])
def test_entity_declarations_are_refused(kind, where, cli, make_input, tmp_path):
    inp = make_input()
    part, root = {"sharedStrings": ("xl/sharedStrings.xml", "sst"),
                  "sheet": (sheet_part(inp, "Lanes"), "worksheet"),
                  "workbook": ("xl/workbook.xml", "workbook")}[where]
    doctype, entity = (_laughs(root), "lol9") if kind == "laughs" else (_xxe(root), "xxe")
    _inject(inp, part, root, doctype, entity)
    folder = tmp_path / "work"
    folder.mkdir()
    t0 = time.process_time()  # CPU time: steadier than the wall clock on a busy machine
    code, stdout, stderr, out = run_cli(cli, inp, folder)
    assert time.process_time() - t0 < 5
    assert_clean_refusal(code, stdout, stderr, out, folder)
    assert re.search(r"^error: (workbook|Lanes): .*declares XML entities.*\(.*do not open the file.*\)$",
                     stderr, re.M), stderr
    if kind == "xxe":
        assert open("/etc/hostname").read().strip() not in stdout + stderr


# --------------------------------------------------------------------------- zip bombs

def _repeat_deflate(prefix: bytes, unit: bytes, repeats: int, suffix: bytes):
    """Raw deflate data, CRC-32 and size of prefix + unit * repeats + suffix, built without
    compressing the whole: after a full flush the compressor starts afresh, so every copy of
    the unit packs to the same bytes, which are simply repeated."""
    c = zlib.compressobj(9, zlib.DEFLATED, -15)
    head = c.compress(prefix) + c.flush(zlib.Z_FULL_FLUSH)
    block = c.compress(unit) + c.flush(zlib.Z_FULL_FLUSH)
    tail = c.compress(suffix) + c.flush()
    crc = zlib.crc32(prefix)
    for _ in range(repeats):
        crc = zlib.crc32(unit, crc)
    crc = zlib.crc32(suffix, crc)
    return head + block * repeats + tail, crc, len(prefix) + len(unit) * repeats + len(suffix)


def _deflate(data: bytes):
    c = zlib.compressobj(6, zlib.DEFLATED, -15)
    return c.compress(data) + c.flush(), zlib.crc32(data), len(data)


def _write_zip(path: str, entries: list[tuple[str, bytes, int, int]]) -> None:
    """A plain zip (no zip64) of already deflated entries: (name, data, crc, size)."""
    with open(path, "wb") as f:
        central = []
        for name, data, crc, size in entries:
            offset, n = f.tell(), name.encode()
            f.write(struct.pack("<IHHHHHIIIHH", 0x04034B50, 20, 0, 8, 0, 0x21, crc, len(data), size,
                                len(n), 0) + n)
            f.write(data)
            central.append(struct.pack("<IHHHHHHIIIHHHHHII", 0x02014B50, 20, 20, 0, 8, 0, 0x21, crc,
                                       len(data), size, len(n), 0, 0, 0, 0, 0, offset) + n)
        start = f.tell()
        cd = b"".join(central)
        f.write(cd)
        f.write(struct.pack("<IHHHHIIH", 0x06054B50, 0, 0, len(entries), len(entries), len(cd),
                            start, 0))


def _good_entries(path: str) -> list[tuple[str, bytes, int, int]]:
    with zipfile.ZipFile(path) as z:
        return [(i.filename, *_deflate(z.read(i.filename))) for i in z.infolist()]


SHEET_HEAD = b'<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>'
SHEET_TAIL = b"</sheetData></worksheet>"


def _peak_rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # Linux: KiB


def _refused_quickly(cli, inp, tmp_path, *words):
    folder = tmp_path / "work"
    folder.mkdir()
    before = _peak_rss_mb()
    t0 = time.process_time()
    code, stdout, stderr, out = run_cli(cli, inp, folder)
    seconds = time.process_time() - t0
    assert seconds < 5, f"{seconds:.1f} s"
    assert _peak_rss_mb() - before < 200, "memory must stay bounded"
    assert_clean_refusal(code, stdout, stderr, out, folder)
    assert re.search(r"^error: workbook: .*\(.+\)$", stderr, re.M), stderr
    for w in words:
        assert w in stderr, stderr
    return stderr


def test_two_gigabyte_sheet_part_is_refused(cli, make_input, tmp_path):
    """The Lanes sheet part unpacks to 2 GiB of spaces (valid XML, correct CRC) and packs to
    about 2 MB."""
    inp = make_input()
    part = sheet_part(inp, "Lanes")
    bomb = _repeat_deflate(SHEET_HEAD, b" " * MB, 2048, SHEET_TAIL)
    entries = [(n, *bomb) if n == part else (n, d, c, s) for n, d, c, s in _good_entries(inp)]
    _write_zip(inp, entries)
    assert os.path.getsize(inp) < 4 * MB
    with zipfile.ZipFile(inp) as z:  # it is a real bomb: the sizes are true and the data unpacks
        assert z.getinfo(part).file_size > 2 * 1024 * MB
        with z.open(part) as f:
            assert f.read(3 * MB) == SHEET_HEAD + b" " * (3 * MB - len(SHEET_HEAD))
    _refused_quickly(cli, inp, tmp_path, "zip bomb", part)


def test_many_parts_adding_up_are_refused(cli, make_input, tmp_path):
    """Parts each small enough to escape the per-part ratio check, adding up to more than
    MAX_UNPACKED_BYTES."""
    inp = make_input()
    units = (reader.RATIO_CHECK_MIN_BYTES - 1) // MB
    pad = _repeat_deflate(b"", b"\0" * MB, units, b"")
    assert pad[2] <= reader.RATIO_CHECK_MIN_BYTES
    count = reader.MAX_UNPACKED_BYTES // pad[2] + 2
    entries = _good_entries(inp) + [(f"xl/media/pad{i}.bin", *pad) for i in range(count)]
    _write_zip(inp, entries)
    assert os.path.getsize(inp) < 8 * MB
    _refused_quickly(cli, inp, tmp_path, "refused as too large or a zip bomb")


def test_part_that_lies_about_its_size_is_refused(cli, make_input, tmp_path):
    """The zip directory says the sheet part is 5,000 bytes, but its data unpacks to 300 MB.
    Python's zipfile stops at the stated size, so the sheet reads as cut-short XML."""
    inp = make_input()
    part = sheet_part(inp, "Lanes")
    data, _crc, _size = _repeat_deflate(SHEET_HEAD, b" " * MB, 300, SHEET_TAIL)
    claimed = 5000
    first = (SHEET_HEAD + b" " * claimed)[:claimed]
    entries = [(n, data, zlib.crc32(first), claimed) if n == part else (n, d, c, s)
               for n, d, c, s in _good_entries(inp)]
    _write_zip(inp, entries)
    _refused_quickly(cli, inp, tmp_path, "malformed XML")
