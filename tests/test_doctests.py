"""Every module's docstring examples run and give what they show (one test per module)."""

from __future__ import annotations

import doctest
import importlib
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
MODULES = sorted(".".join(p.relative_to(ROOT).with_suffix("").parts).removesuffix(".__init__")
                 for p in (ROOT / "solsphere").rglob("*.py") if p.name != "__main__.py")


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE,
                             verbose=False)
    assert result.failed == 0, f"{result.failed} of {result.attempted} examples failed in {name}"


def test_the_examples_are_counted():
    # the packaged modules carry examples: a collection that found none would hide them
    attempted = sum(doctest.testmod(importlib.import_module(n), verbose=False).attempted
                    for n in ("solsphere.formatting", "solsphere.models.classic"))
    assert attempted >= 8
