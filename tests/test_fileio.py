"""Tests for solsphere.fileio: decoding, binary detection, limits, atomic writes."""

from __future__ import annotations

import errno
import os
import stat

import pytest

from solsphere.io import files as fileio
from solsphere.errors import InputError

TEXT = "solvent,outcome,note\ntoluene,good,25 °C δ\n"


@pytest.mark.parametrize("data", [
    TEXT.encode("utf-8"),
    b"\xef\xbb\xbf" + TEXT.encode("utf-8"),
    TEXT.encode("utf-16"),                              # BOM + native order
    b"\xff\xfe" + TEXT.encode("utf-16-le"),
    b"\xfe\xff" + TEXT.encode("utf-16-be"),
    TEXT.encode("utf-32"),
    TEXT.encode("utf-16-le"),                           # no BOM: guessed from the zeros
    TEXT.encode("utf-16-be"),
    TEXT.replace("\n", "\r\n").encode("utf-8"),
    TEXT.replace("\n", "\r").encode("utf-8"),
], ids=["utf8", "utf8-bom", "utf16", "utf16le-bom", "utf16be-bom", "utf32",
        "utf16le-nobom", "utf16be-nobom", "crlf", "cr"])
def test_decode_variants(data):
    assert fileio.decode(data) == TEXT


def test_normalise_newlines_mixed():
    assert fileio.normalise_newlines("a\r\nb\rc\nd\r\n\r\n") == "a\nb\nc\nd\n\n"


def test_invalid_utf8_names_line_and_column():
    data = "solvent,outcome\ntoluene,good\nxyl".encode() + b"\xe8ne,bad\n"  # cp1252 'è'
    with pytest.raises(InputError) as ei:
        fileio.decode(data, file="r.csv")
    e = ei.value
    assert (e.file, e.line, e.column) == ("r.csv", 3, 4)
    s = str(e)
    assert "0xe8" in s and "UTF-8" in s and "\n" not in s and s.startswith("r.csv, line 3")


@pytest.mark.parametrize("data,words", [
    (b"PK\x03\x04\x14\x00\x06\x00" + b"\x00" * 40, "workbook (.xlsx or .ods)"),
    (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\x00" * 40, "Excel workbook (.xls)"),
    (b"%PDF-1.7\n", "PDF"),
    (b"solvent,outcome\ntol\x00uene,good\n", "NUL bytes"),
    (b"solvent,outcome\n" + bytes(range(1, 9)) * 20, "looks binary"),
])
def test_binary_junk_is_refused(data, words):
    with pytest.raises(InputError) as ei:
        fileio.decode(data, file="x.csv")
    assert words in str(ei.value) and str(ei.value).startswith("x.csv")


def test_read_text_checks_path(tmp_path):
    p = tmp_path / "r.csv"
    p.write_bytes(b"\xef\xbb\xbfa,b\r\n1,2\r\n")
    assert fileio.read_text(p) == "a,b\n1,2\n"
    assert fileio.read_text(str(p), limit=100) == "a,b\n1,2\n"
    with pytest.raises(InputError, match="file is 13 bytes; the limit is 5 bytes"):
        fileio.read_text(p, limit=5)
    missing = str(tmp_path / "missing.csv")
    with pytest.raises(InputError) as ei:
        fileio.read_text(missing)
    assert str(ei.value).startswith(missing + ": file not found.")
    with pytest.raises(InputError, match="folder, not a file"):
        fileio.read_text(tmp_path)


def test_read_text_refuses_devices():
    """A device is never read (before: read up to the size limit, then refused)."""
    if not os.path.exists("/dev/zero"):
        pytest.skip("no /dev/zero")
    with pytest.raises(InputError, match="a device, not a regular file"):
        fileio.read_text("/dev/zero", limit=1000)


def _leftovers(folder):
    return [f for f in os.listdir(folder) if f.endswith(".tmp")]


def test_atomic_write_creates_and_replaces(tmp_path):
    p = tmp_path / "project.json"
    assert fileio.atomic_write_text(p, "one\n") == p
    assert p.read_text() == "one\n"
    os.chmod(p, 0o600)
    fileio.atomic_write_text(str(p), "two ½\n")
    assert p.read_text(encoding="utf-8") == "two ½\n"
    assert stat.S_IMODE(p.stat().st_mode) == 0o600  # permissions kept
    assert _leftovers(tmp_path) == []


def test_atomic_write_failure_mid_write_keeps_old_file(tmp_path, monkeypatch):
    p = tmp_path / "project.json"
    p.write_text("precious old content\n")

    def half_then_disk_full(fh, data):
        fh.write(data[: len(data) // 2])
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(fileio, "_write_bytes", half_then_disk_full)
    with pytest.raises(InputError) as ei:
        fileio.atomic_write_text(p, "new content that will not arrive\n" * 100)
    assert "disk is full" in str(ei.value) and "unchanged" in str(ei.value)
    assert p.read_text() == "precious old content\n"
    assert _leftovers(tmp_path) == []


def test_atomic_write_failure_at_rename_and_non_os_error(tmp_path, monkeypatch):
    p = tmp_path / "project.json"
    p.write_text("old\n")
    real_replace = os.replace

    def failing_replace(a, b):
        raise OSError(errno.EACCES, "Permission denied")

    monkeypatch.setattr(fileio.os, "replace", failing_replace)
    with pytest.raises(InputError, match="Permission denied"):
        fileio.atomic_write_text(p, "new\n")
    monkeypatch.setattr(fileio.os, "replace", real_replace)
    assert p.read_text() == "old\n" and _leftovers(tmp_path) == []

    def interrupted(fh, data):
        raise KeyboardInterrupt

    monkeypatch.setattr(fileio, "_write_bytes", interrupted)
    with pytest.raises(KeyboardInterrupt):
        fileio.atomic_write_text(p, "new\n")
    assert p.read_text() == "old\n" and _leftovers(tmp_path) == []


def test_atomic_write_bad_targets(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        fileio.atomic_write_text(tmp_path / "no" / "such" / "p.json", "x")
    with pytest.raises(InputError, match="folder"):
        fileio.atomic_write_text(tmp_path, "x")


def test_atomic_write_through_symlink(tmp_path):
    target = tmp_path / "real.json"
    target.write_text("old")
    link = tmp_path / "link.json"
    link.symlink_to(target)
    fileio.atomic_write_text(link, "new")
    assert link.is_symlink() and target.read_text() == "new"
