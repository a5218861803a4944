"""Structures from names and files: what ``solsphere estimate --from FILE`` reads.

A structures file has one entry a line: a SMILES or a compound name (blank lines and
lines starting with ``#`` are skipped). A line that RDKit reads as a SMILES is taken as
one; otherwise it is a name, resolved through the library (names, CAS numbers,
abbreviations) and then the offline identifier database of the ``chemicals`` package.
"""

from __future__ import annotations

from solsphere.errors import InputError
from solsphere.estimate.features import parse_smiles
from solsphere.io.files import read_text

__all__ = ["smiles_for_name", "read_structures"]


def smiles_for_name(name: str, library=None) -> str | None:
    """SMILES of a named compound, or None when no offline source knows it.

    The library resolves its names, abbreviations and CAS numbers to a CAS number first;
    ``chemicals.identifiers`` (package data, no network) gives the structure.

    Examples
    --------
    >>> smiles_for_name("gamma-valerolactone")
    'CC1CCC(=O)O1'
    """
    try:
        from chemicals.identifiers import search_chemical  # deferred: large database
    except ImportError:  # pragma: no cover - chemicals comes with the structure extra
        return None
    keys = [name]
    if library is not None:
        sol = library.find(name)
        if sol is not None and sol.cas:
            keys.insert(0, sol.cas)
    for key in keys:
        try:
            meta = search_chemical(key)
        except (ValueError, KeyError):
            continue
        if meta is not None and meta.smiles:
            return meta.smiles
    return None


def read_structures(path, library=None) -> list[tuple[str, str]]:
    """(label, SMILES) for each entry of a structures file, in file order.

    Raises
    ------
    InputError
        An empty file, or a line that is neither a readable SMILES nor a known name
        (naming the file and the line).
    """
    file = str(path)
    text = read_text(path).lstrip("\ufeff").replace("\r\n", "\n").replace("\r", "\n")
    out = []
    for i, raw in enumerate(text.split("\n"), 1):
        entry = raw.strip()
        if not entry or entry.startswith("#"):
            continue
        if parse_smiles(entry) is not None:
            out.append((entry, entry))
            continue
        smiles = smiles_for_name(entry, library)
        if smiles is None:
            raise InputError(f"{entry[:60]!r} is neither a SMILES that RDKit can read nor a "
                             f"compound name we know.", file=file, line=i,
                             hint="write the compound's SMILES on this line")
        out.append((entry, smiles))
    if not out:
        raise InputError("the file lists no structure.", file=file,
                         hint="write one SMILES or compound name a line")
    return out
