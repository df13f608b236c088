"""Manifest of an output folder: every file written, with its SHA-256 and size.

The manifest is JSON, written atomically into (normally) the output root::

    {"manifest_version": 1, "generator": "suitmap 0.1.0", "attrs": {...},
     "entries": [{"path": "baseline/suitability.tif", "layer": "suitability",
                  "period_or_comparison": "baseline", "format": "COG",
                  "sha256": "…", "bytes": 12345}, ...]}

Paths are relative to the output root, with ``/`` separators, sorted.
"""

from __future__ import annotations

import json
import os
from dataclasses import asdict, dataclass
from pathlib import Path, PurePosixPath

from suitmap._version import __version__
from suitmap.errors import OutputError
from suitmap.writers.atomic import atomic_write_text, sha256_file

__all__ = ["Manifest", "ManifestEntry", "verify_manifest", "MANIFEST_VERSION"]

MANIFEST_VERSION = 1
_FIELDS = ("path", "layer", "period_or_comparison", "format", "sha256", "bytes")


@dataclass(frozen=True)
class ManifestEntry:
    """One written file."""

    path: str
    layer: str
    period_or_comparison: str
    format: str
    sha256: str
    bytes: int


class Manifest:
    """Collects the files of one output folder.

    Parameters
    ----------
    root
        The output root; entry paths are stored relative to it.
    attrs
        Provenance to store with the manifest (run file, profile, ...);
        must be JSON-serialisable (other values are stored as text).
    """

    def __init__(self, root: str | os.PathLike, attrs: dict | None = None) -> None:
        self.root = Path(root)
        self.attrs = dict(attrs or {})
        self._entries: dict[str, ManifestEntry] = {}

    def _relative(self, path: Path) -> str:
        full = path if path.is_absolute() else self.root / path
        try:
            rel = full.resolve().relative_to(self.root.resolve())
        except ValueError as exc:
            raise OutputError(f"cannot list {path} in the manifest: it is outside the "
                              f"output root {self.root}") from exc
        return rel.as_posix()

    def add(self, path: str | os.PathLike, *, layer: str, period_or_comparison: str,
            format: str) -> ManifestEntry:
        """Record a finished file (its checksum and size are read now).

        *path* is absolute or relative to the root.  Adding the same file
        again replaces its entry.

        Raises
        ------
        OutputError
            If the file does not exist or lies outside the root.
        """
        path = Path(path)
        full = path if path.is_absolute() else self.root / path
        if not full.is_file():
            raise OutputError(f"cannot list {full} in the manifest: no such file; "
                              "write it first")
        rel = self._relative(full)
        entry = ManifestEntry(path=rel, layer=str(layer),
                              period_or_comparison=str(period_or_comparison),
                              format=str(format), sha256=sha256_file(full),
                              bytes=full.stat().st_size)
        self._entries[rel] = entry
        return entry

    @property
    def entries(self) -> list[ManifestEntry]:
        """Entries sorted by path."""
        return [self._entries[k] for k in sorted(self._entries)]

    def __len__(self) -> int:
        return len(self._entries)

    def to_dict(self) -> dict:
        """The manifest as a JSON-ready dict."""
        return {"manifest_version": MANIFEST_VERSION,
                "generator": f"suitmap {__version__}",
                "attrs": self.attrs,
                "entries": [asdict(e) for e in self.entries]}

    def write(self, path: str | os.PathLike) -> Path:
        """Write the manifest as JSON (atomically); return the path."""
        text = json.dumps(self.to_dict(), indent=2, sort_keys=False, ensure_ascii=False,
                          default=str)
        return atomic_write_text(path, text + "\n")


def verify_manifest(path: str | os.PathLike,
                    root: str | os.PathLike | None = None) -> list[str]:
    """Problems found when checking a manifest against the files it lists.

    Parameters
    ----------
    path
        The manifest JSON.
    root
        Output root the entry paths are relative to; default: the
        manifest's folder.

    Returns
    -------
    list of str
        One line per problem (unreadable manifest, malformed entry, path
        outside the root, missing file, size or checksum mismatch); empty
        when everything matches.
    """
    path = Path(path)
    base = Path(root) if root is not None else path.parent
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        return [f"{path}: cannot read the manifest ({exc})"]
    entries = doc.get("entries") if isinstance(doc, dict) else None
    if not isinstance(entries, list):
        return [f"{path}: no 'entries' list"]
    problems: list[str] = []
    for i, entry in enumerate(entries):
        if not isinstance(entry, dict) or any(k not in entry for k in _FIELDS):
            problems.append(f"entry {i}: missing one of {', '.join(_FIELDS)}")
            continue
        rel = PurePosixPath(str(entry["path"]))
        if rel.is_absolute() or ".." in rel.parts:
            problems.append(f"{rel}: path is not inside the output root")
            continue
        full = base.joinpath(*rel.parts)
        if not full.is_file():
            problems.append(f"{rel}: missing")
            continue
        size = full.stat().st_size
        if size != entry["bytes"]:
            problems.append(f"{rel}: size {size} bytes, manifest says {entry['bytes']}")
        digest = sha256_file(full)
        if digest != entry["sha256"]:
            problems.append(f"{rel}: sha256 {digest} does not match the manifest")
    return problems
