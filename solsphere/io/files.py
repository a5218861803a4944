"""Low-level file helpers shared by the readers and writers.

Reading: :func:`read_text` checks the path (missing, a folder, too big), decodes the
bytes (:func:`decode`: UTF-8, UTF-8 with BOM, UTF-16/UTF-32 with BOM, BOM-less UTF-16
by its zero bytes), refuses binary files (a spreadsheet workbook saved as ``.csv`` by
mistake, a PDF ...) and normalises line endings (:func:`normalise_newlines`:
``\\r\\n`` and lone ``\\r`` become ``\\n``). Every problem is an
:class:`~solsphere.errors.InputError` naming the file.

Writing: :func:`atomic_write_text` writes a temporary file in the same folder, flushes
and ``fsync``-s it, then renames it over the target with :func:`os.replace`, so the
target is either the old file or the complete new one, never a half-written mix.
"""

from __future__ import annotations

import errno
import os
import stat
import tempfile
from pathlib import Path

from solsphere.errors import InputError

#: Largest file :func:`read_text` accepts by default [bytes] (5 MB).
MAX_BYTES = 5_000_000
#: Longest single field (cell) the table readers accept [characters].
MAX_FIELD = 10_000

_UTF8_HINT = ("save the file as UTF-8 (Excel: 'CSV UTF-8'; LibreOffice: character set "
              "'Unicode (UTF-8)')")

# (signature, what it is) for binary files people save or rename as .csv by mistake.
_SIGNATURES = (
    (b"PK\x03\x04", "a zipped workbook (.xlsx or .ods)"),
    (b"\xd0\xcf\x11\xe0", "an old Excel workbook (.xls)"),
    (b"%PDF", "a PDF document"),
    (b"\x89PNG", "a PNG image"),
    (b"\xff\xd8\xff", "a JPEG image"),
    (b"\x1f\x8b", "a gzip archive"),
)


def _label(path) -> str:
    """The path as the user gave it (for messages)."""
    return os.fspath(path) if isinstance(path, (str, os.PathLike)) else str(path)


def normalise_newlines(text: str) -> str:
    r"""Turn Windows (``\r\n``) and old Mac (``\r``) line endings into ``\n``.

    >>> normalise_newlines("a\r\nb\rc\n")
    'a\nb\nc\n'
    """
    return text.replace("\r\n", "\n").replace("\r", "\n")


def _position(data: bytes, offset: int) -> tuple[int, int]:
    """1-based (line, column) of byte ``offset`` in ``data`` (counting bytes)."""
    before = data[:offset]
    line = before.count(b"\n") + 1
    col = offset - (before.rfind(b"\n") + 1) + 1
    return line, col


def _guess_utf16(data: bytes) -> str | None:
    """'utf-16-le' / 'utf-16-be' for BOM-less UTF-16 text of mostly ASCII, else None."""
    head = data[:400]
    head = head[: len(head) // 2 * 2]
    if len(head) < 4:
        return None
    even, odd = head[0::2], head[1::2]
    if odd.count(0) >= 0.9 * len(odd) and even.count(0) == 0:
        return "utf-16-le"
    if even.count(0) >= 0.9 * len(even) and odd.count(0) == 0:
        return "utf-16-be"
    return None


def decode(data: bytes, file: str | None = None) -> str:
    """Decode the bytes of a text file and normalise its line endings.

    Parameters
    ----------
    data : bytes
        The file's content.
    file : str or None, default=None
        Name used in error messages.

    Returns
    -------
    text : str
        The text without a byte order mark, with ``\\n`` line endings.

    Raises
    ------
    InputError
        Binary content (a workbook, an image, NUL bytes) or bytes that are not valid
        in the detected encoding (the message gives the line and column).

    Examples
    --------
    >>> decode("\\ufeffsolvent,outcome\\r\\n".encode("utf-8"))
    'solvent,outcome\\n'
    >>> decode("solvent\\toutcome\\n".encode("utf-16"))
    'solvent\\toutcome\\n'
    """
    if data.startswith(b"\xef\xbb\xbf"):
        encoding = "utf-8-sig"
    elif data.startswith((b"\xff\xfe\x00\x00", b"\x00\x00\xfe\xff")):
        encoding = "utf-32"
    elif data.startswith((b"\xff\xfe", b"\xfe\xff")):
        encoding = "utf-16"
    else:
        for sig, what in _SIGNATURES:
            if data.startswith(sig):
                raise InputError(f"this is {what}, not a text table.", file=file,
                                 hint="open it and save (or export) it as CSV, "
                                      "then give that file")
        encoding = _guess_utf16(data) or "utf-8"
    try:
        text = data.decode(encoding)
    except UnicodeDecodeError as exc:
        if encoding.startswith("utf-8"):
            skip = 3 if encoding == "utf-8-sig" else 0
            line, col = _position(data, exc.start)
            if line == 1:
                col -= skip
            bad = data[exc.start:exc.start + 1].hex()
            if exc.reason == "unexpected end of data" and exc.end >= len(data):
                raise InputError(f"the file ends in the middle of a UTF-8 character "
                                 f"(byte 0x{bad}): it was cut short, or it is not UTF-8.",
                                 file=file, line=line, column=col,
                                 hint="restore the complete file (from a backup or by "
                                      "saving it again); " + _UTF8_HINT) from None
            raise InputError(f"byte 0x{bad} is not valid UTF-8 text (the file may be "
                             f"in a Windows or Mac code page).", file=file, line=line,
                             column=col, hint=_UTF8_HINT) from None
        raise InputError(f"the file starts like {encoding.upper()} text but is not valid "
                         f"{encoding.upper()} ({exc.reason}).", file=file,
                         hint=_UTF8_HINT) from None
    text = text.lstrip("\ufeff").rstrip("\x1a")  # stray BOM; DOS end-of-file mark
    if "\x00" in text:
        line = text.count("\n", 0, text.index("\x00")) + 1
        raise InputError("the file contains NUL bytes: it is binary, not a text table.",
                         file=file, line=line,
                         hint="save (or export) the data as CSV and give that file")
    sample = text[:4096]
    control = sum(1 for ch in sample if ord(ch) < 32 and ch not in "\t\n\r\f\v")
    if sample and control > max(2, 0.01 * len(sample)):
        raise InputError(f"the file looks binary ({control} control characters in the "
                         f"first {len(sample)}), not a text table.", file=file,
                         hint="save (or export) the data as CSV and give that file")
    return normalise_newlines(text)


#: The code page tried when a file is not valid UTF-8 (Windows' Western European code
#: page, what Excel's plain "CSV" writes on most European and American machines).
FALLBACK_ENCODING = "cp1252"


def decode_noted(data: bytes, file: str | None = None) -> tuple[str, str | None]:
    """Like :func:`decode`, with a fallback to the Windows code page and a note saying so.

    Bytes that are not valid UTF-8 (and carry no UTF-16/32 byte order mark) are decoded
    as :data:`FALLBACK_ENCODING` when every byte is defined there; the note (None when
    no fallback was needed) names the encoding used, for the reader's warnings.

    Returns
    -------
    text : str
    note : str or None

    Raises
    ------
    InputError
        As :func:`decode`, when the fallback does not apply either.

    Examples
    --------
    >>> decode_noted("solvent,note\\nwater,25 °C\\n".encode("cp1252"))[1]
    'not valid UTF-8; read as Windows code page 1252 (cp1252)'
    >>> decode_noted(b"solvent,note\\n")
    ('solvent,note\\n', None)
    """
    try:
        return decode(data, file=file), None
    except InputError as exc:
        if not str(exc.message).startswith("byte 0x"):  # only the "not valid UTF-8" case
            raise
        try:
            text = data.decode(FALLBACK_ENCODING)
        except UnicodeDecodeError:
            raise exc from None
    text = decode(text.encode("utf-8"), file=file)  # the same binary checks and newlines
    return text, (f"not valid UTF-8; read as Windows code page 1252 "
                  f"({FALLBACK_ENCODING})")


def _size(n: int) -> str:
    """Readable size: '5 MB', '12.3 kB', '7 bytes'."""
    if n >= 1_000_000:
        return f"{n / 1e6:.3g} MB"
    if n >= 1000:
        return f"{n / 1e3:.3g} kB"
    return f"{n} bytes"


def read_text(path, *, limit: int = MAX_BYTES) -> str:
    """Read a text file with the checks every solsphere input goes through.

    Parameters
    ----------
    path : str or os.PathLike
        The file. Error messages name it exactly as given.
    limit : int, default=MAX_BYTES
        Largest accepted size [bytes].

    Returns
    -------
    text : str
        Decoded text with ``\\n`` line endings (see :func:`decode`).

    Raises
    ------
    InputError
        Missing path, a folder, a pipe, device or socket (never read: it could wait
        forever), unreadable, larger than ``limit``, binary, or not decodable.
    """
    return decode(read_bytes(path, limit=limit), file=_label(path))


def read_bytes(path, *, limit: int = MAX_BYTES) -> bytes:
    """The bytes of a regular file, with the checks of :func:`read_text` (no decoding).

    Raises
    ------
    InputError
        Missing path, a folder, a pipe, device or socket, unreadable, larger than
        ``limit``.
    """
    label = _label(path)
    p = Path(path)
    try:
        if not p.exists():
            where = Path.cwd()
            raise InputError("file not found.", file=label,
                             hint=f"check the name and folder (relative paths start "
                                  f"from {where})")
        if p.is_dir():
            raise InputError("this is a folder, not a file.", file=label,
                             hint="give the path of the file inside it")
        kind = _special_kind(p)
        if kind:
            raise InputError(f"this is {kind}, not a regular file.", file=label,
                             hint="give the path of a saved file (solsphere does not read "
                                  "from pipes or devices)")
        size = p.stat().st_size
        if size > limit:
            raise InputError(f"the file is {_size(size)}; the limit is {_size(limit)}.",
                             file=label,
                             hint="check that this is the right file; split it if it "
                                  "really is this big")
        # non-blocking open, then a check of what was opened: a file swapped for a pipe
        # after the check above still cannot make the read wait forever
        fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
        with os.fdopen(fd, "rb") as fh:
            if not stat.S_ISREG(os.fstat(fh.fileno()).st_mode):
                raise InputError("this is not a regular file.", file=label,
                                 hint="give the path of a saved file")
            data = fh.read(limit + 1)  # bounded
    except InputError:
        raise
    except OSError as exc:
        raise InputError(f"cannot read the file ({exc.strerror or exc}).", file=label,
                         hint="check that it exists and that you may read it") from None
    if len(data) > limit:
        raise InputError(f"more than {_size(limit)} of data (the size limit).",
                         file=label, hint="check that this is the right file")
    return data


_KINDS = ((stat.S_ISFIFO, "a named pipe (FIFO)"), (stat.S_ISCHR, "a device"),
          (stat.S_ISBLK, "a device"), (stat.S_ISSOCK, "a socket"))


def _special_kind(path) -> str | None:
    """'a named pipe (FIFO)', 'a device', 'a socket' (through symlinks), else None."""
    try:
        mode = os.stat(path).st_mode
    except (OSError, ValueError):
        return None
    for test, what in _KINDS:
        if test(mode):
            return what
    return None


def check_output(path, inputs=()) -> None:
    """Refuse an output path that writing would destroy.

    A new path or an existing regular file is fine; a folder, a device, a named pipe
    or a socket (also behind a symbolic link) is refused, and so is any of ``inputs``
    (the files the command reads). Nothing is opened, so a pipe cannot block.

    Parameters
    ----------
    path : str or os.PathLike
    inputs : iterable of str or os.PathLike
        Files being read by the same command.

    Raises
    ------
    InputError

    Examples
    --------
    >>> check_output("/dev/null")
    Traceback (most recent call last):
    ...
    solsphere.errors.InputError: /dev/null: this is a device, not a regular file; not writing to it. Fix: give the name of a new or existing ordinary file
    """
    label = _label(path)
    if os.path.isdir(path):
        raise InputError("this is a folder; cannot save over it.", file=label,
                         hint="give a file name, e.g. project.json")
    kind = _special_kind(path)
    if kind:
        raise InputError(f"this is {kind}, not a regular file; not writing to it.",
                         file=label, hint="give the name of a new or existing ordinary file")
    for src in inputs:
        try:
            same = src is not None and os.path.samefile(path, src)
        except (OSError, ValueError):
            same = False
        if same:
            raise InputError(f"this is the input file {_label(src)!r}; not overwriting it.",
                             file=label, hint="choose another name for the output")


def _write_bytes(fh, data: bytes) -> None:
    """Write all of ``data`` to the open binary file ``fh`` (a seam for tests)."""
    fh.write(data)


def atomic_write_text(path, text: str, *, encoding: str = "utf-8") -> Path:
    """Write ``text`` to ``path`` so that a crash never leaves a half-written file.

    The encoded text goes through :func:`atomic_write_bytes` (see there).

    Parameters
    ----------
    path : str or os.PathLike
        Target file.
    text : str
        Content; written as is (no newline translation).
    encoding : str, default="utf-8"

    Returns
    -------
    path : pathlib.Path
        The file written.
    """
    return atomic_write_bytes(path, text.encode(encoding))


def atomic_write_bytes(path, data: bytes) -> Path:
    """Write ``data`` to ``path`` so that a crash never leaves a half-written file.

    The text goes to a temporary file in the target's folder, is flushed and
    ``fsync``-ed, and then renamed over the target with :func:`os.replace` (atomic on
    POSIX and Windows). If anything fails, the temporary file is removed and the old
    target is left exactly as it was. A symbolic link is written through (its target
    is replaced, the link stays). An existing target keeps its permission bits.

    Parameters
    ----------
    path : str or os.PathLike
        Target file.
    data : bytes
        Content.

    Returns
    -------
    path : pathlib.Path
        The file written.

    Raises
    ------
    InputError
        The target is a folder, a device, a named pipe or a socket (:func:`check_output`),
        its folder does not exist, or the operating system refused the write
        (permission, disk full ...). The old file is untouched.
    """
    label = _label(path)
    check_output(path)
    p = Path(path)
    if p.is_symlink():
        p = Path(os.path.realpath(p))
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"the folder {str(folder)!r} does not exist.", file=label,
                         hint="create the folder first or choose another place")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise InputError(f"cannot write in this folder ({exc.strerror or exc}).",
                         file=label, hint="choose a folder you may write to") from None
    try:
        with os.fdopen(fd, "wb") as fh:
            _write_bytes(fh, data)
            fh.flush()
            os.fsync(fh.fileno())
        try:
            mode = stat.S_IMODE(p.stat().st_mode)
        except FileNotFoundError:
            mode = 0o644
        os.chmod(tmp, mode)
        os.replace(tmp, p)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(exc, OSError):
            reason = exc.strerror or str(exc)
            if exc.errno == errno.ENOSPC:
                reason = "the disk is full"
            raise InputError(f"could not save ({reason}); the previous file, if any, "
                             f"is unchanged.", file=label,
                             hint="free some space or choose another place") from None
        raise
    try:  # make the rename itself durable (POSIX; best effort)
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)
    except OSError:
        pass
    return p
