"""What every result object offers: ``to_dict()``, ``to_frame()``, ``str()`` and a notebook view.

A result holds the numbers of one computation (a fit, a ranking, a blend screen ...).
``to_dict()`` gives JSON-safe plain types (the ``--json`` output and the project file),
``records()`` the per-item table behind ``to_frame()`` (a pandas DataFrame), ``str()`` the
plain-text report, and ``_repr_html_()`` shows the report's summary and the table in a
notebook.
"""

from __future__ import annotations

import html


class Result:
    """Mixin for result objects. Subclasses define ``to_dict`` and ``__str__``, and either
    name the list of per-item rows in ``to_dict()`` with :attr:`rows_key` or override
    :meth:`records`."""

    #: Key of ``to_dict()`` that holds the per-item rows (None: see :meth:`records`).
    rows_key: str | None = None
    #: Whether the notebook view shows :meth:`records` as a table under the summary.
    notebook_table: bool = True

    def to_dict(self) -> dict:  # pragma: no cover - every subclass defines it
        raise NotImplementedError

    def records(self) -> list[dict]:
        """The per-item table as a list of flat dicts (one per solvent, blend, trial ...);
        without :attr:`rows_key`, one row of the result's scalar values."""
        d = self.to_dict()
        if self.rows_key is None:
            return [{k: v for k, v in d.items() if not isinstance(v, (list, dict))}]
        return [dict(r) for r in d.get(self.rows_key) or []]

    def to_frame(self):
        """The per-item table as a :class:`pandas.DataFrame`."""
        import pandas as pd  # deferred: pandas costs ~0.3 s to import and the CLI rarely needs it

        return pd.DataFrame(self.records())

    def summary(self) -> str:
        """The report's first paragraph (the notebook view puts the table after it)."""
        return str(self).split("\n\n")[0]

    def _repr_html_(self) -> str:
        if not self.notebook_table or not self.records():
            return f"<pre>{html.escape(str(self))}</pre>"
        return (f"<pre>{html.escape(self.summary())}</pre>"
                + self.to_frame().to_html(max_rows=50, index=False))
