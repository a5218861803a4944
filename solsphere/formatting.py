"""One way to write numbers, labels and plain-text tables (shared by every report).

Solubility parameters get one decimal in tables and full precision in JSON; a missing
value is written as an em dash (never "nan" or "None").
"""

from __future__ import annotations

from typing import Any, Iterable, Sequence

import numpy as np

#: How a missing value is shown in tables.
MISSING = "—"


def num(x, fmt: str = "{:.1f}", missing: str = MISSING) -> str:
    """A number formatted with ``fmt``, or ``missing`` when it is None or NaN.

    >>> num(17.04), num(None), num(3.14159, "{:.2f}"), num(float("nan"))
    ('17.0', '—', '3.14', '—')
    """
    if x is None:
        return missing
    try:
        if x != x:  # NaN
            return missing
    except (TypeError, ValueError):
        pass
    return fmt.format(x)


def short(x, missing: str = MISSING) -> str:
    """One decimal, trailing zeros dropped: ``4.0`` -> ``'4'``, ``1.25`` -> ``'1.2'``.

    >>> short(4.0), short(10.0), short(1.5), short(None)
    ('4', '10', '1.5', '—')
    """
    return missing if x is None else f"{round(float(x), 1):g}"


def pct(x, digits: int = 0, missing: str = MISSING) -> str:
    """A fraction as a percentage: ``0.25`` -> ``'25%'``.

    >>> pct(0.254), pct(0.254, 1), pct(None)
    ('25%', '25.4%', '—')
    """
    return missing if x is None else f"{100.0 * float(x):.{digits}f}%"


def float_or_none(x) -> float | None:
    """``float(x)``, or None when ``x`` is None."""
    return None if x is None else float(x)


def blend_label(names: Sequence[str], fractions: Sequence[float]) -> str:
    """A blend as people write it: volume percentages, largest part first as given.

    >>> blend_label(["toluene", "ethanol"], [0.7, 0.3])
    '70% toluene + 30% ethanol'
    """
    return " + ".join(f"{pct(f)} {n}" for n, f in zip(names, fractions))


def format_table(rows: Sequence[Sequence[Any]]) -> str:
    """Left-aligned plain-text table; the first row is the header.

    >>> print(format_table([("name", "RED"), ("acetone", "0.52")]))
    name     RED
    -------  ----
    acetone  0.52
    """
    widths = [max(len(str(r[i])) for r in rows) for i in range(len(rows[0]))]
    lines = []
    for k, r in enumerate(rows):
        lines.append("  ".join(str(c).ljust(w) for c, w in zip(r, widths)).rstrip())
        if k == 0:
            lines.append("  ".join("-" * w for w in widths))
    return "\n".join(lines)


def plain(x):
    """``x`` with numpy scalars, arrays and tuples turned into JSON-safe plain types.

    >>> plain({"a": np.float64(1.5), "b": (np.int64(2), [np.bool_(True)])})
    {'a': 1.5, 'b': [2, [True]]}
    """
    if isinstance(x, dict):
        return {str(k): plain(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [plain(v) for v in x]
    if isinstance(x, np.ndarray):
        return plain(x.tolist())
    if isinstance(x, np.generic):
        return x.item()
    return x


def split_names(values: Iterable[str] | str | None) -> list[str]:
    """Names from text separated by commas, semicolons or new lines (or a list of such
    texts), blanks dropped.

    >>> split_names(["MEK, toluene", " ethanol"]), split_names("a;;b"), split_names(None)
    (['MEK', 'toluene', 'ethanol'], ['a', 'b'], [])
    """
    if values is None:
        return []
    if isinstance(values, str):
        values = [values]
    out = []
    for v in values:
        text = str(v).replace(";", ",").replace("\n", ",")
        out += [x.strip() for x in text.split(",") if x.strip()]
    return out


def warning_lines(warnings: Sequence[str], title: str = "Warnings") -> list[str]:
    """A report section: ``[[Warnings]]`` and one indented line per warning ("none").

    >>> warning_lines([])
    ['[[Warnings]]', '    none']
    """
    return [f"[[{title}]]"] + ([f"    {t}" for t in warnings] or ["    none"])
