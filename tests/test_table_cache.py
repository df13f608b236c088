"""The on-disk table cache (suitmap.layers.table_cache): a stored table evaluates bit
for bit as the one built, with numba's read-only array types restored; bad or
foreign files are rebuilt, a changed kernel source or an "off" setting never
reads one, and an unwritable folder only costs the cache."""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).parent))
from test_development import CURVES  # noqa: E402  (published parameter sets, cited there)

from suitmap.layers import compute as layers  # noqa: E402
from suitmap.layers import table_cache  # noqa: E402
from suitmap.kernels.tables import _pl_arcs  # noqa: E402
from suitmap.kernels.tables import core as tables  # noqa: E402
from suitmap.kernels.tables import development_table  # noqa: E402


def _days(n=5000, seed=4):
    rng = np.random.default_rng(seed)
    tmin = rng.uniform(-5.0, 30.0, n).astype(np.float32)
    tmax = (tmin + rng.gamma(3.0, 3.0, n)).astype(np.float32)
    dl = rng.uniform(10.0, 14.0, n).astype(np.float32)
    return tmin, tmax, np.roll(tmin, 1), dl


def frozen(table) -> list:
    """Read-only flags of the table's arrays, in a fixed order."""
    out = []

    def walk(v):
        if isinstance(v, np.ndarray):
            out.append(not v.flags.writeable)
        elif isinstance(v, (tuple, list)):
            for x in v:
                walk(x)
        elif isinstance(v, dict):
            for k in sorted(v, key=str):
                walk(v[k])
    walk(vars(table))
    return out


class Counter:
    def __init__(self, make):
        self.make, self.calls = make, 0

    def __call__(self):
        self.calls += 1
        return self.make()


@pytest.fixture
def folder(tmp_path, monkeypatch):
    monkeypatch.setenv("SUITMAP_CACHE_DIR", str(tmp_path / "cache"))
    return tmp_path / "cache"


@pytest.mark.parametrize("diurnal", ["sine", "parton_logan"])
def test_round_trip_is_bit_identical(folder, diurnal):
    kw = {} if diurnal == "sine" else {"daylength_range": (10.0, 14.0)}
    build = Counter(lambda: development_table("linear", CURVES["linear"], diurnal=diurnal,
                                              **kw))
    args = ("test", "linear", diurnal)
    first = table_cache.cached_table(args, build)
    again = table_cache.cached_table(args, build)
    assert build.calls == 1 and len(list(folder.glob("table-*.npz"))) == 1
    assert again is not first
    assert frozen(again) == frozen(first)
    assert any(frozen(first))                       # the quadrature nodes are read-only
    assert set(vars(again)) == set(vars(first)) and type(again) is type(first)
    tmin, tmax, nxt, dl = _days(70_000)             # the parallel path
    kw = {} if diurnal == "sine" else {"tmin_next": nxt, "daylength": dl}
    want = first.evaluate(tmin, tmax, **kw)
    loop = tables._run_parallel if diurnal == "sine" else _pl_arcs.arcs_parallel
    compiled = len(loop.signatures)
    np.testing.assert_array_equal(again.evaluate(tmin, tmax, **kw), want)
    assert len(loop.signatures) == compiled         # same array types: nothing recompiled


def test_foreign_content_is_not_loaded(folder):
    # a file naming another class (or anything not a suitmap table) is rebuilt;
    # np.load(allow_pickle=False) never runs code from it
    build = Counter(lambda: development_table("linear", CURVES["linear"]))
    table_cache.cached_table(("f",), build)
    (path,) = folder.glob("table-*.npz")
    with np.load(path) as z:
        meta = json.loads(str(z["meta"]))
        arrays = {k: z[k] for k in z.files if k != "meta"}
    meta["class"] = "Popen"
    with open(path, "wb") as f:
        np.savez(f, meta=np.array(json.dumps(meta)), **arrays)
    again = table_cache.cached_table(("f",), build)
    assert build.calls == 2 and type(again).__name__ == "DailyTable"


def test_bad_file_is_rebuilt_and_replaced(folder):
    build = Counter(lambda: development_table("linear", CURVES["linear"]))
    table_cache.cached_table(("bad",), build)
    (path,) = folder.glob("table-*.npz")
    path.write_bytes(b"not an npz file")
    table_cache.cached_table(("bad",), build)
    assert build.calls == 2
    table_cache.cached_table(("bad",), build)       # the replacement is good
    assert build.calls == 2
    assert not list(folder.glob(".tmp-*"))          # no temporary file left behind


def test_other_arguments_or_code_do_not_share_a_file(folder, monkeypatch):
    build = Counter(lambda: development_table("linear", CURVES["linear"]))
    table_cache.cached_table(("a",), build)
    table_cache.cached_table(("b",), build)
    assert build.calls == 2
    monkeypatch.setattr(table_cache, "_code_digest", lambda: "edited kernels")
    table_cache.cached_table(("a",), build)
    assert build.calls == 3 and len(list(folder.glob("table-*.npz"))) == 3


def test_off_and_unwritable(tmp_path, monkeypatch):
    build = Counter(lambda: development_table("linear", CURVES["linear"]))
    monkeypatch.setenv("SUITMAP_CACHE_DIR", "off")
    assert table_cache.cache_dir() is None
    table_cache.cached_table(("x",), build)
    table_cache.cached_table(("x",), build)
    assert build.calls == 2
    blocker = tmp_path / "a-file"
    blocker.write_text("in the way")
    monkeypatch.setenv("SUITMAP_CACHE_DIR", str(blocker / "cache"))   # cannot be created
    assert table_cache.cached_table(("x",), build) is not None and build.calls == 3
    monkeypatch.delenv("SUITMAP_CACHE_DIR")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    assert table_cache.cache_dir() == tmp_path / "xdg" / "suitmap"


def test_pipeline_reads_its_tables_back(folder, monkeypatch):
    params = tuple(sorted(CURVES["logan6"].items()))
    layers._built_table.cache_clear()
    first = layers._built_table("logan6", params, "sine", None)
    layers._built_table.cache_clear()

    def no_build(*a, **k):
        raise AssertionError("the table should come from the cache")

    monkeypatch.setattr("suitmap.kernels.tables.development_table", no_build)
    again = layers._built_table("logan6", params, "sine", None)
    layers._built_table.cache_clear()
    tmin, tmax, _, _ = _days()
    np.testing.assert_array_equal(again.evaluate(tmin, tmax), first.evaluate(tmin, tmax))


def test_least_recently_used_tables_are_pruned(folder, monkeypatch):
    build = Counter(lambda: development_table("linear", CURVES["linear"]))
    table_cache.cached_table(("old",), build)
    size = next(folder.glob("table-*.npz")).stat().st_size
    monkeypatch.setattr(table_cache, "MAX_BYTES", int(2.5 * size))   # room for two
    table_cache.cached_table(("mid",), build)
    table_cache.cached_table(("old",), build)       # read: renewed, now the newest
    table_cache.cached_table(("new",), build)       # a third: the least recent goes
    assert build.calls == 3 and len(list(folder.glob("table-*.npz"))) == 2
    table_cache.cached_table(("old",), build)
    table_cache.cached_table(("new",), build)
    assert build.calls == 3                         # both kept
    table_cache.cached_table(("mid",), build)
    assert build.calls == 4                         # it was the one pruned


def test_read_only_folder_is_still_read(folder, monkeypatch):
    build = Counter(lambda: development_table("linear", CURVES["linear"]))
    table_cache.cached_table(("ro",), build)

    def refuse(*a, **k):
        raise PermissionError("read-only")

    monkeypatch.setattr(table_cache, "_touch", refuse)
    assert table_cache.cached_table(("ro",), build) is not None
    assert build.calls == 1                          # read, not rebuilt
