"""A finished run is not redone.

After a complete run, ``<output.dir>/.suitmap/finished.json`` records a hash of
everything the outputs depend on — the suitmap version, the run file's
settings, the organism profile, and the name, size and modification time of
every input file its patterns match, and the bytes of the profile file — and
the size and modification time of every output file the manifest lists.  :func:`up_to_date` compares both with
the present state without opening any climate file: when nothing changed, a
rerun writes nothing.  A lock or a temporary file in the folder (a run in
progress, or a killed one) also means "not finished".  Any change (an input file touched, a setting edited, an
output deleted or altered, a new suitmap version) makes it ``None`` and the
run proceeds as usual (reusing its per-period cache).
"""

from __future__ import annotations

import glob
import hashlib
import json
import os
from pathlib import Path

from suitmap._version import __version__
from suitmap.config.runfile import RunFile, load_run
from suitmap.pipeline.folder import STATE_DIR
from suitmap.writers.atomic import TEMP_MARK, atomic_write_text

FINISHED = "finished.json"
# pipeline.folder imports xarray only when it reads its cache: the check here stays light


def _sig(path: str | Path) -> list:
    st = os.stat(path)
    return [os.path.abspath(path), st.st_size, st.st_mtime_ns]


def _input_files(run: RunFile) -> list[str]:
    patterns = []
    for p in run.periods:
        sources = [p.tmin, p.tmax]
        if p.delta is not None:
            sources += [p.delta.historical_tmin, p.delta.historical_tmax]
        for src in sources:
            patterns.extend(src.patterns)
    return sorted({h for pat in patterns for h in glob.glob(os.path.expanduser(pat), recursive=True)
                   if os.path.isfile(h)})


def run_key(run: RunFile) -> str:
    """Hash of everything a run's outputs depend on (inputs by name, size, mtime).

    The profile enters by its file's bytes, so nothing heavier than the run
    file's TOML is parsed: a rerun with nothing to do stays quick."""
    try:
        profile = hashlib.sha256(Path(run.profile_path).read_bytes()).hexdigest()
    except OSError:
        profile = None
    doc = {"suitmap": __version__, "run": run.raw, "run_file": str(run.path),
           "profile": [str(run.profile_path), profile], "inputs": [_sig(f) for f in _input_files(run)]}
    return hashlib.sha256(json.dumps(doc, sort_keys=True, default=str).encode()).hexdigest()


def _outputs(root: Path) -> list[list] | None:
    try:
        entries = json.loads((root / "manifest.json").read_text())["entries"]
        return [_sig(root / e["path"]) for e in entries] + [_sig(root / "manifest.json")]
    except (OSError, ValueError, KeyError, TypeError):
        return None


def up_to_date(run: RunFile) -> Path | None:
    """The manifest of a finished run that nothing has changed since, else None."""
    root = Path(run.output.dir)
    if (root / STATE_DIR / "lock").exists() or any(root.rglob(f".*{TEMP_MARK}*")):
        return None  # another run is writing, or a killed one left its traces: let run() sort it out
    try:
        doc = json.loads((root / STATE_DIR / FINISHED).read_text())
    except (OSError, ValueError):
        return None
    if doc.get("key") != run_key(run) or doc.get("outputs") != _outputs(root):
        return None
    return root / "manifest.json"


def mark_finished(run: RunFile) -> None:
    """Record a complete run (call after ``manifest.json`` is written)."""
    root = Path(run.output.dir)
    outputs = _outputs(root)
    if outputs is None:
        return
    atomic_write_text(root / STATE_DIR / FINISHED,
                      json.dumps({"key": run_key(run), "outputs": outputs}) + "\n")


def finished_manifest(run: RunFile | str | Path) -> Path | None:
    """``manifest.json`` of a finished run of this run file that nothing has changed since
    (no input, setting, profile or output file), else None; opens no climate file."""
    return up_to_date(run if isinstance(run, RunFile) else load_run(run))
