"""The output folder of a run: lock, layer cache and resumption.

``<output.dir>/.suitmap/`` holds

* ``lock``          the process that is writing here (refuses a concurrent run);
* ``state.json``    which run file owns the folder;
* ``cache/``        each period's computed layers as NetCDF, named by a hash of
                    its inputs (file names, sizes, modification times), the
                    profile and the suitmap version.

A rerun of the same run file reuses every cached period whose hash still
matches and recomputes the others, so a run killed at any moment finishes
where it stopped. Every file is written under a temporary name and renamed,
so no file is ever half-written; ``manifest.json`` is written last and marks a
complete run.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import socket
import time
from pathlib import Path
from typing import TYPE_CHECKING

from suitmap._version import __version__
from suitmap.errors import OutputError
from suitmap.writers.atomic import TEMP_MARK, atomic_path, atomic_write_text

if TYPE_CHECKING:
    import xarray as xr

STATE_DIR = ".suitmap"


def _file_signature(path: str) -> dict:
    st = os.stat(path)
    return {"path": os.path.abspath(path), "size": st.st_size, "mtime_ns": st.st_mtime_ns}


def period_key(profile_dict: dict, period, files: dict[str, list[str]],
               template_files: dict[str, list[str]] | None, extra: dict | None = None) -> str:
    """Hash of everything a period's layers depend on."""
    doc = {
        "suitmap": __version__,
        "profile": profile_dict,
        "period": {"name": period.name, "years": list(period.years), "kind": period.kind,
                   "variables": [period.tmin.variable, period.tmax.variable]
                   + ([period.pr.variable] if getattr(period, "pr", None) else []),
                   "delta": repr(period.delta),
                   **({"offsets": [period.tmin_offset, period.tmax_offset]}
                      if getattr(period, "tmin_offset", None) or getattr(period, "tmax_offset", None)
                      else {})},
        "files": {role: [_file_signature(f) for f in fs] for role, fs in sorted(files.items())},
        "template": {role: [_file_signature(f) for f in fs]
                     for role, fs in sorted((template_files or {}).items())},
        "extra": extra or {},
    }
    text = json.dumps(doc, sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


class OutputFolder:
    """Context manager owning ``path`` for one run: lock, state, cache."""

    def __init__(self, path: Path, run_file: Path, overwrite: bool = False):
        self.path = Path(path)
        self.run_file = str(Path(run_file).resolve())
        self.overwrite = overwrite
        self.state_dir = self.path / STATE_DIR
        self.cache_dir = self.state_dir / "cache"
        self.lock_file = self.state_dir / "lock"
        self._locked = False

    # -- ownership ----------------------------------------------------------
    def owner(self) -> str | None:
        try:
            return json.loads((self.state_dir / "state.json").read_text())["run_file"]
        except (OSError, ValueError, KeyError):
            return None

    def check(self) -> None:
        """Refuse a folder this run may not write into (before any work)."""
        p = self.path
        if p.is_symlink() and not p.exists():
            raise OutputError(f"output path {p} is a link to {os.readlink(p)}, which does not exist; "
                              "remove the link or choose another output.dir")
        if p.exists() and not p.is_dir():
            raise OutputError(f"output path {p} is a file, not a folder; choose another output.dir")
        if p.exists() and not self.overwrite and self.owner() != self.run_file:
            raise OutputError(f"output folder {p} exists and was not made by this run file; "
                              "pass --overwrite (overwrite=True) to replace it or set another output.dir")
        if not p.parent.is_dir():
            raise OutputError(f"output folder {p}: its parent {p.parent} does not exist; create it first")
        if not os.access(p.parent, os.W_OK):
            raise OutputError(f"output folder {p}: {p.parent} is not writable; choose another output.dir")

    def __enter__(self) -> "OutputFolder":
        self.check()
        fresh = not self.path.exists()
        self.state_dir.mkdir(parents=True, exist_ok=True)
        self._lock()
        if self.overwrite and not fresh:
            for child in self.path.iterdir():
                if child.name != STATE_DIR:
                    shutil.rmtree(child) if child.is_dir() else child.unlink()
            shutil.rmtree(self.cache_dir, ignore_errors=True)
        self.cache_dir.mkdir(exist_ok=True)
        self._remove_stale_temporaries()
        atomic_write_text(self.state_dir / "state.json",
                          json.dumps({"run_file": self.run_file, "suitmap": __version__}) + "\n")
        return self

    def __exit__(self, *exc) -> bool:
        if self._locked:
            try:
                self.lock_file.unlink()
            except FileNotFoundError:
                pass
            self._locked = False
        return False

    def _remove_stale_temporaries(self) -> None:
        """Temporary files a killed run left behind (we hold the lock: nobody else writes)."""
        for p in self.path.rglob(f".*{TEMP_MARK}*"):
            if p.is_file():
                p.unlink(missing_ok=True)

    def _lock(self) -> None:
        me = {"pid": os.getpid(), "host": socket.gethostname(), "started": time.time()}
        for _ in range(2):
            try:
                fd = os.open(self.lock_file, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
            except FileExistsError:
                try:
                    other = json.loads(self.lock_file.read_text())
                except (OSError, ValueError):
                    other = {}
                same_host = other.get("host") == me["host"]
                if same_host and isinstance(other.get("pid"), int) and not _pid_alive(other["pid"]):
                    self.lock_file.unlink(missing_ok=True)  # a killed run's lock: take over
                    continue
                raise OutputError(
                    f"output folder {self.path} is in use by another suitmap run (pid "
                    f"{other.get('pid', '?')} on {other.get('host', '?')}); wait for it to finish, "
                    f"or delete {self.lock_file} if that run is gone") from None
            with os.fdopen(fd, "w") as fh:
                json.dump(me, fh)
            self._locked = True
            return
        raise OutputError(f"cannot lock output folder {self.path}; try again")

    # -- cache ----------------------------------------------------------------
    def _cache_path(self, name: str, key: str) -> Path:
        return self.cache_dir / f"{name}.{key[:24]}.nc"

    def load(self, name: str, key: str) -> "xr.Dataset | None":
        import xarray as xr  # here, not at the top: a quick "nothing to do" rerun needs no xarray

        p = self._cache_path(name, key)
        if not p.is_file():
            return None
        try:
            with xr.open_dataset(p, decode_coords="all", mask_and_scale=True) as ds:
                ds = ds.load()
        except (OSError, ValueError):
            return None  # unreadable: recompute
        crs = ds.rio.crs
        ds = ds.drop_vars("spatial_ref", errors="ignore")
        for v in ds.data_vars:
            ds[v].attrs.pop("grid_mapping", None)
            ds[v].encoding = {}
        if crs is not None:
            ds = ds.rio.write_crs(crs)
        return ds

    def store(self, name: str, key: str, ds: "xr.Dataset") -> "xr.Dataset":
        """Write a period's layers to the cache and return them as read back."""
        for old in self.cache_dir.glob(f"{name}.*.nc"):
            old.unlink()
        clean = ds.copy()
        for v in clean.variables:
            clean[v].encoding = {}
        with atomic_path(self._cache_path(name, key)) as tmp:
            clean.to_netcdf(tmp, engine="netcdf4")
        return self.load(name, key)

    # -- files of earlier runs -------------------------------------------------
    def previous_outputs(self) -> list[str]:
        try:
            doc = json.loads((self.path / "manifest.json").read_text())
            return [e["path"] for e in doc.get("entries", [])]
        except (OSError, ValueError, KeyError):
            return []
