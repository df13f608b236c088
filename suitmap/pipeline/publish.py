"""Outputs staged, then published together: a failed write leaves the previous state.

:func:`write_outputs <suitmap.pipeline.outputs.write_outputs>` writes every file
of a run under ``<output.dir>/.suitmap/staging/`` (the same file system, so
each move is a rename).  Only when all are complete does :func:`publish`

1. remove ``manifest.json`` (the folder is incomplete until it is back),
2. clear the folder if the run replaces it (``--overwrite``),
3. move every staged file into place and remove the previous run's files this
   run no longer writes,
4. write ``manifest.json`` last.

A failure while writing removes the staging folder and leaves the output
folder exactly as it was (the previous complete run, or no outputs), and
:func:`failure` says so.  Only a failure inside steps 1-3 (renames on one file
system) can leave a folder without ``manifest.json``, and the message then says
that.  The per-period layer cache under ``.suitmap/`` is kept either way, so a
rerun finishes without recomputing.
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

from suitmap.errors import OutputError, SuitmapError
from suitmap.writers.manifest import Manifest

__all__ = ["failure", "publish", "staging"]

STATE_DIR = ".suitmap"


def staging(root: Path) -> Path:
    """A fresh, empty staging folder of ``root``."""
    stage = Path(root) / STATE_DIR / "staging"
    shutil.rmtree(stage, ignore_errors=True)
    stage.mkdir(parents=True)
    return stage


def failure(exc: BaseException, root: Path, stage: Path) -> BaseException:
    """Remove the staging folder; the error to raise, saying what ``root`` still holds."""
    shutil.rmtree(stage, ignore_errors=True)
    if not isinstance(exc, (OSError, SuitmapError)):
        return exc  # a bug: reported as an internal error, the folder is still untouched
    state = ("the previous complete outputs there are unchanged" if (root / "manifest.json").is_file()
             else "it holds no outputs of this run")
    first = (str(exc).splitlines() or [""])[0]
    return OutputError(f"writing the outputs into {root} failed ({first}); nothing was published, "
                       f"{state}; computed layers are cached in {root / STATE_DIR}, so rerunning the "
                       "same command after fixing the cause finishes quickly")


def publish(stage: Path, root: Path, manifest: Manifest, before: list[str], clear: bool) -> Path:
    """Move the staged files into ``root`` (see the module docstring); return the manifest path."""
    try:
        (root / "manifest.json").unlink(missing_ok=True)
        if clear:  # --overwrite: the folder's earlier content goes, the cache stays
            for child in root.iterdir():
                if child.name != STATE_DIR:
                    shutil.rmtree(child) if child.is_dir() and not child.is_symlink() else child.unlink()
        for f in sorted(stage.rglob("*")):
            if f.is_file():
                dest = root / f.relative_to(stage)
                dest.parent.mkdir(parents=True, exist_ok=True)
                os.replace(f, dest)
        listed = {e.path for e in manifest.entries}
        for rel in before:  # outputs of an earlier configuration of this run file
            if rel not in listed and ".." not in Path(rel).parts:
                (root / rel).unlink(missing_ok=True)
        for sub in root.iterdir():
            if sub.is_dir() and sub.name != STATE_DIR and not any(sub.iterdir()):
                sub.rmdir()
        shutil.rmtree(stage, ignore_errors=True)
    except OSError as exc:
        raise OutputError(f"moving the finished outputs into {root} failed ({exc}); the folder is "
                          "incomplete (no manifest.json); rerun the same command to finish it") from exc
    return manifest.write(root / "manifest.json")
