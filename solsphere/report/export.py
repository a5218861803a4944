"""Figures written as PNG, SVG or PDF for reports and lab notebooks, through plotly's
``kaleido`` (version 1 or later), which drives a Chromium-based browser.

kaleido finds the browser itself: ``BROWSER_PATH`` when set, else ``chromium`` /
``google-chrome`` on ``PATH`` (Debian's ``/usr/bin/chromium``). One browser serves every
image of a call (starting it takes seconds; each further image a fraction of that), with
MathJax off and a dead proxy so that it never fetches anything: plotly.js comes from the
installed plotly package.

Each image is rendered in memory, then written atomically (:func:`write_bytes`), so a failed export never leaves half a
file or destroys an old one.
"""

from __future__ import annotations

import asyncio
import contextlib
import logging
from dataclasses import dataclass
from pathlib import Path

from solsphere.errors import InputError
from solsphere.io.files import atomic_write_text

__all__ = ["FORMATS", "write_bytes", "image_format", "render_images", "write_images", "ExportedImage",
           "CHROMIUM_HINT"]

#: File suffixes written as images, and the format kaleido is asked for.
FORMATS = {".png": "png", ".svg": "svg", ".pdf": "pdf"}
#: Our own words for a missing browser.
CHROMIUM_HINT = ("install Chromium (Debian/Ubuntu: sudo apt-get install chromium), or set "
                 "BROWSER_PATH to a Chrome or Chromium program")
#: Default image size in CSS pixels (the PNG is drawn at ``scale`` times this).
DEFAULT_WIDTH, DEFAULT_HEIGHT = 1000, 750
#: Largest width or height accepted [px] (a bigger image is a typing slip, and it would
#: take the browser long to draw); our choice.
MAX_SIDE = 6000
#: A proxy address that refuses connections: the export browser never reaches the network.
NO_NETWORK_PROXY = "http://127.0.0.1:9"


def write_bytes(path: str, data: bytes) -> None:
    """Write bytes atomically through :func:`solsphere.io.files.atomic_write_text`:
    Latin-1 maps each byte to one character and back, so the file gets ``data`` exactly
    (the text writer encodes and writes in binary mode, without newline translation).

    >>> import tempfile, os
    >>> d = tempfile.mkdtemp(); p = os.path.join(d, "x.bin")
    >>> write_bytes(p, bytes(range(256)) + b"\\r\\n"); open(p, "rb").read() == bytes(range(256)) + b"\\r\\n"
    True
    """
    atomic_write_text(path, data.decode("latin-1"), encoding="latin-1")


@dataclass
class ExportedImage:
    """One image written: where, in which format and how many bytes."""

    path: str
    format: str
    bytes: int

    def to_dict(self) -> dict:
        return {"path": self.path, "format": self.format, "bytes": self.bytes}


def image_format(path: str) -> str | None:
    """The image format of an output path by its suffix, or None when not an image.

    >>> image_format("map.PNG"), image_format("page.html")
    ('png', None)
    """
    return FORMATS.get(Path(path).suffix.lower())


def _check_size(value, setting: str) -> int:
    if value is None:
        return DEFAULT_WIDTH if setting == "width" else DEFAULT_HEIGHT
    v = int(value)
    if not 50 <= v <= MAX_SIDE:
        raise InputError(f"an image {setting} of {v} px is outside 50 to {MAX_SIDE} px.",
                         setting=setting)
    return v


async def _render(jobs, width: int, height: int, scale: float):
    import kaleido  # deferred: imports choreographer and starts nothing until used

    out = []
    async with kaleido.Kaleido(n=1, mathjax=False, proxy_server=NO_NETWORK_PROXY) as k:
        for fig, fmt in jobs:
            # vector formats keep their size in CSS pixels; PNG is drawn denser
            out.append(await k.calc_fig(fig, opts={"format": fmt, "width": width,
                                                   "height": height,
                                                   "scale": scale if fmt == "png" else 1}))
    return out


@contextlib.contextmanager
def _quiet_browser_logs():
    """Keep the browser driver's diagnostics (e.g. "JSONError decoding message.
    Ignoring", with a trace, when the browser sends a partial message) off the user's
    terminal for the duration of an export; failures still raise."""
    loggers = [logging.getLogger(n) for n in ("choreographer", "kaleido", "logistro")]
    levels = [lg.level for lg in loggers]
    for lg in loggers:
        lg.setLevel(logging.CRITICAL)
    try:
        yield
    finally:
        for lg, level in zip(loggers, levels):
            lg.setLevel(level)


def render_images(jobs, width: int | None = None, height: int | None = None,
                  scale: float = 2.0) -> list[bytes]:
    """Draw figures as image bytes, all through one browser.

    Parameters
    ----------
    jobs : sequence of (figure, format)
        plotly figures (or figure dicts) and ``"png"``, ``"svg"`` or ``"pdf"``.
    width, height : int or None, default=None
        The image size in CSS pixels (50 to :data:`MAX_SIDE`); None: 1000 × 750.
    scale : float, default=2.0
        Pixel density of PNG images (2: sharp on paper and on high-resolution screens);
        SVG and PDF keep ``width`` × ``height``. A 3D map's scene is a WebGL drawing, so
        in SVG and PDF it is embedded as a picture (axes labels included); 2D figures are
        vectors throughout.

    Returns
    -------
    list of bytes

    Raises
    ------
    InputError
        No Chromium-based browser found (``setting="output"``), or a size out of range
        (``setting="width"`` / ``"height"``).
    """
    width, height = _check_size(width, "width"), _check_size(height, "height")
    jobs = list(jobs)
    if not jobs:
        return []
    try:
        # deferred: only figure export needs kaleido (and the browser driver it imports)
        from kaleido.errors import BrowserFailedError, ChromeNotFoundError
    except ImportError as exc:
        raise InputError(f"figure export needs the kaleido package ({exc}).",
                         setting="output", hint="pip install 'kaleido>=1.1'") from None
    try:
        with _quiet_browser_logs():
            return asyncio.run(_render(jobs, width, height, scale))
    except ChromeNotFoundError:
        raise InputError("figure export needs a Chromium-based browser, and none was found.",
                         setting="output", hint=CHROMIUM_HINT) from None
    except BrowserFailedError as exc:
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise InputError(f"the browser that draws the figures did not start ({first[:200]}).",
                         setting="output", hint=CHROMIUM_HINT) from None


def write_images(items, width: int | None = None, height: int | None = None,
                 scale: float = 2.0) -> list[ExportedImage]:
    """Write figures to image files (format from each suffix), all through one browser.

    Parameters
    ----------
    items : sequence of (figure, path)
    width, height, scale
        As :func:`render_images`.

    Returns
    -------
    list of ExportedImage
    """
    items = list(items)
    fmts = []
    for _, path in items:
        fmt = image_format(str(path))
        if fmt is None:
            raise InputError(f"{path} is not a .png, .svg or .pdf file name.",
                             setting="output")
        fmts.append(fmt)
    data = render_images([(fig, f) for (fig, _), f in zip(items, fmts)], width=width,
                         height=height, scale=scale)
    out = []
    for (_, path), fmt, blob in zip(items, fmts, data):
        write_bytes(str(path), blob)
        out.append(ExportedImage(str(path), fmt, len(blob)))
    return out
