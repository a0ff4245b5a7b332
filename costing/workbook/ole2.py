"""The names in an OLE2 compound file's directory ([MS-CFB], Compound File Binary File Format),
read minimally: enough to tell an old binary .xls (a `Workbook` or `Book` stream) from an
encrypted Office Open XML workbook (an `EncryptedPackage` stream). Reads only the header, the
FAT sectors it needs and the directory chain; never a stream's contents."""

from __future__ import annotations

import struct

SIGNATURE = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
_END = 0xFFFFFFFE  # ENDOFCHAIN
_MAX_SECTOR = 0xFFFFFFFA  # MAXREGSECT: above it are markers, not sectors
_MAX_ENTRIES = 4096  # directory entries read at most (a workbook's are a few dozen)


def stream_names(path: str) -> set[str] | None:
    """Names of the storages and streams in the directory, or None when the file is not a
    readable compound file (bad header, a chain that leaves the file or loops)."""
    try:
        with open(path, "rb") as f:
            return _names(f)
    except (OSError, struct.error, ValueError):
        return None


def _names(f) -> set[str] | None:
    header = f.read(512)
    if len(header) < 512 or not header.startswith(SIGNATURE):
        return None
    shift = struct.unpack_from("<H", header, 30)[0]
    if shift not in (9, 12):
        return None
    size = 1 << shift
    f.seek(0, 2)
    file_size = f.tell()
    n_fat, first_dir = struct.unpack_from("<iI", header, 44)
    difat = list(struct.unpack_from("<109I", header, 76))
    first_difat, n_difat = struct.unpack_from("<Ii", header, 68)

    def sector(n: int) -> bytes:
        if n > _MAX_SECTOR or (n + 1) * size >= file_size:
            raise ValueError("sector outside the file")
        f.seek((n + 1) * size)
        return f.read(size).ljust(size, b"\0")  # some writers cut the last sector short

    per = size // 4
    nxt, hops = first_difat, 0
    while nxt <= _MAX_SECTOR and hops < max(n_difat, 0) and hops < 1000:
        entries = struct.unpack(f"<{per}I", sector(nxt))
        difat.extend(entries[:-1])
        nxt, hops = entries[-1], hops + 1
    fat_sectors = [s for s in difat[:max(n_fat, 0)] if s <= _MAX_SECTOR]
    fat_cache: dict[int, tuple[int, ...]] = {}

    def next_sector(n: int) -> int:
        idx = n // per
        if idx >= len(fat_sectors):
            raise ValueError("sector beyond the FAT")
        if idx not in fat_cache:
            fat_cache[idx] = struct.unpack(f"<{per}I", sector(fat_sectors[idx]))
        return fat_cache[idx][n % per]

    names: set[str] = set()
    seen: set[int] = set()
    s = first_dir
    while s <= _MAX_SECTOR and len(names) < _MAX_ENTRIES:
        if s in seen:
            raise ValueError("directory chain loops")
        seen.add(s)
        data = sector(s)
        for off in range(0, size, 128):
            entry = data[off:off + 128]
            length, kind = struct.unpack_from("<HB", entry, 64)
            if kind in (1, 2, 5) and 2 <= length <= 64 and length % 2 == 0:
                names.add(entry[:length - 2].decode("utf-16-le", "replace"))
        s = next_sector(s)
    if s != _END:
        raise ValueError("directory chain does not end")
    return names
