"""Zip-level reading and writing of a workbook package, copying untouched parts byte for byte.

A workbook file (.xlsx/.xlsm) is a zip archive of XML and binary parts (ECMA-376 Part 2, Open
Packaging Conventions). To add sheets without touching the user's parts, we copy each untouched
entry's local header, compressed data and data descriptor verbatim (never inflating and
deflating it again), write replaced entries at their old position, append new entries at the end
and write a fresh central directory. Memory use does not depend on the size of the copied parts.

Zip layout facts used here (PKWARE APPNOTE.TXT, sections 4.3.7, 4.3.9, 4.3.12, 4.3.16):
local header signature 0x04034b50 (30 fixed bytes), central directory record 0x02014b50 (46
fixed bytes), end of central directory 0x06054b50 (22 fixed bytes plus a comment), data
descriptor (optional signature 0x08074b50) present when general-purpose flag bit 3 is set.
"""

from __future__ import annotations

__all__ = ["ZipEntry", "ZipSource", "ZipTarget", "PackageTooLarge"]

import struct
import zipfile
import zlib
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import BinaryIO

_LOCAL_SIG = 0x04034B50
_CENTRAL_SIG = 0x02014B50
_END_SIG = 0x06054B50
_DESCRIPTOR_SIG = 0x08074B50
_COPY_CHUNK = 1 << 20
# 1980-01-01 00:00, the time xlsxwriter stamps too: new parts are reproducible run to run
_DOS_DATE = (0 << 9) | (1 << 5) | 1
_DOS_TIME = 0


class PackageTooLarge(Exception):
    """The archive uses zip64 records, which this copier does not handle."""


@dataclass
class ZipEntry:
    """One entry of the source archive as recorded in its central directory."""

    name: str
    central: bytes  # the whole central directory record, name/extra/comment included
    flags: int
    method: int
    crc: int
    compressed_size: int
    size: int
    local_offset: int

    @property
    def has_descriptor(self) -> bool:
        return bool(self.flags & 0x08)


class ZipSource:
    """Central-directory view of a zip file plus raw access to each entry's bytes."""

    def __init__(self, path: str | Path) -> None:
        self.path = Path(path)
        self._fh: BinaryIO = open(self.path, "rb")  # noqa: SIM115 - closed by close()
        try:
            self.entries = list(self._read_central_directory())
        except Exception:
            self._fh.close()
            raise
        self._by_name = {e.name: e for e in self.entries}
        self._zip = zipfile.ZipFile(self._fh)

    def close(self) -> None:
        self._zip.close()
        self._fh.close()

    def __enter__(self) -> ZipSource:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def names(self) -> list[str]:
        return [e.name for e in self.entries]

    def __contains__(self, name: str) -> bool:
        return name in self._by_name

    def read(self, name: str) -> bytes:
        """The uncompressed content of one part."""
        return self._zip.read(name)

    def entry(self, name: str) -> ZipEntry:
        return self._by_name[name]

    def _read_central_directory(self) -> Iterator[ZipEntry]:
        fh = self._fh
        fh.seek(0, 2)
        file_size = fh.tell()
        tail_len = min(file_size, 22 + 65535)
        fh.seek(file_size - tail_len)
        tail = fh.read(tail_len)
        pos = tail.rfind(struct.pack("<I", _END_SIG))
        if pos < 0:
            raise zipfile.BadZipFile("no end-of-central-directory record")
        (_, _disk, _cd_disk, _n_here, n_total, cd_size, cd_offset, _clen) = struct.unpack(
            "<IHHHHIIH", tail[pos : pos + 22]
        )
        if n_total == 0xFFFF or cd_size == 0xFFFFFFFF or cd_offset == 0xFFFFFFFF:
            raise PackageTooLarge("zip64 archives are not supported")
        fh.seek(cd_offset)
        data = fh.read(cd_size)
        p = 0
        for _ in range(n_total):
            (
                sig,
                _vm,
                _vn,
                flags,
                method,
                _t,
                _d,
                crc,
                csize,
                usize,
                nlen,
                elen,
                clen,
                _ds,
                _ia,
                _ea,
                offset,
            ) = struct.unpack("<IHHHHHHIIIHHHHHII", data[p : p + 46])
            if sig != _CENTRAL_SIG:
                raise zipfile.BadZipFile("damaged central directory")
            raw_name = data[p + 46 : p + 46 + nlen]
            name = raw_name.decode("utf-8" if flags & 0x800 else "cp437")
            if csize == 0xFFFFFFFF or usize == 0xFFFFFFFF or offset == 0xFFFFFFFF:
                raise PackageTooLarge("zip64 entries are not supported")
            end = p + 46 + nlen + elen + clen
            yield ZipEntry(name, data[p:end], flags, method, crc, csize, usize, offset)
            p = end

    def copy_raw(self, entry: ZipEntry, out: BinaryIO) -> None:
        """Write the entry's local header, compressed data and descriptor to ``out`` verbatim."""
        fh = self._fh
        fh.seek(entry.local_offset)
        header = fh.read(30)
        sig, *_rest = struct.unpack("<I", header[:4])
        if sig != _LOCAL_SIG:
            raise zipfile.BadZipFile(f"damaged local header for {entry.name}")
        nlen, elen = struct.unpack("<HH", header[26:30])
        out.write(header)
        out.write(fh.read(nlen + elen))
        remaining = entry.compressed_size
        while remaining:
            chunk = fh.read(min(_COPY_CHUNK, remaining))
            if not chunk:
                raise zipfile.BadZipFile(f"truncated data for {entry.name}")
            out.write(chunk)
            remaining -= len(chunk)
        if entry.has_descriptor:
            first = fh.read(4)
            if struct.unpack("<I", first)[0] == _DESCRIPTOR_SIG:
                out.write(first + fh.read(12))
            else:
                out.write(first + fh.read(8))


class ZipTarget:
    """Writes entries in order (raw copies, replaced or new parts), then the central directory."""

    def __init__(self, fh: BinaryIO) -> None:
        self._fh = fh
        self._central: list[bytes] = []

    def copy(self, source: ZipSource, entry: ZipEntry) -> None:
        offset = self._fh.tell()
        source.copy_raw(entry, self._fh)
        record = bytearray(entry.central)
        struct.pack_into("<I", record, 42, offset)
        self._central.append(bytes(record))

    def add(self, name: str, data: bytes, like: ZipEntry | None = None) -> None:
        """Deflate ``data`` as a new entry; ``like`` keeps an old entry's time and attributes."""
        # large parts of ours get the fastest deflate level: a little larger, several times quicker
        comp = zlib.compressobj(1 if len(data) > (4 << 20) else 6, zlib.DEFLATED, -15)
        packed = comp.compress(data) + comp.flush()
        crc = zlib.crc32(data) & 0xFFFFFFFF
        raw_name = name.encode("utf-8")
        flags = 0x800 if not name.isascii() else 0
        if like is not None:
            (_, _vm, _vn, _f, _m, t, d) = struct.unpack("<IHHHHHH", like.central[:16])
            ext_attr = struct.unpack("<I", like.central[38:42])[0]
        else:
            t, d, ext_attr = _DOS_TIME, _DOS_DATE, 0
        offset = self._fh.tell()
        local = struct.pack(
            "<IHHHHHIIIHH",
            _LOCAL_SIG,
            20,
            flags,
            8,
            t,
            d,
            crc,
            len(packed),
            len(data),
            len(raw_name),
            0,
        )
        self._fh.write(local + raw_name)
        self._fh.write(packed)
        central = struct.pack(
            "<IHHHHHHIIIHHHHHII",
            _CENTRAL_SIG,
            20,
            20,
            flags,
            8,
            t,
            d,
            crc,
            len(packed),
            len(data),
            len(raw_name),
            0,
            0,
            0,
            0,
            ext_attr,
            offset,
        )
        self._central.append(central + raw_name)

    def finish(self) -> None:
        start = self._fh.tell()
        for rec in self._central:
            self._fh.write(rec)
        size = self._fh.tell() - start
        n = len(self._central)
        if n >= 0xFFFF or start >= 0xFFFFFFFF:
            raise PackageTooLarge("the package would need zip64 records")
        self._fh.write(struct.pack("<IHHHHIIH", _END_SIG, 0, 0, n, n, size, start, 0))
