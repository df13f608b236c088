"""The bundled demo: the invented Karsvale Uplands and an invented pest.

``suitmap demo`` copies the sample inputs (run file, profile, climate) into a
fresh folder and runs the whole pipeline there, so the user ends with an
editable example next to its results.
"""

from __future__ import annotations

import shutil
from importlib import resources
from pathlib import Path

from suitmap.errors import OutputError
from suitmap.pipeline.outputs import staged_folder

RUN_FILE = "demo_run.toml"


def sample_dir() -> Path:
    """Folder of the bundled sample rasters (installed package or source checkout)."""
    try:
        with resources.as_file(resources.files("suitmap.sample_rasters")) as found:
            p = Path(found)
        if (p / RUN_FILE).is_file():
            return p
    except (ModuleNotFoundError, TypeError, AttributeError):
        pass
    p = Path(__file__).resolve().parents[2] / "sample_rasters"  # <checkout>/suitmap/pipeline/
    if (p / RUN_FILE).is_file():
        return p
    raise OutputError("the bundled sample rasters are missing from this installation; "
                      "reinstall suitmap with 'pip install .' from a full checkout")


def prepare_demo(out: str | Path = "suitmap-demo", *, overwrite: bool = False) -> Path:
    """Copy the demo inputs into ``out`` (created; refused if it exists unless
    ``overwrite``) and return the path of its run file."""
    out = Path(out).expanduser().resolve()
    src = sample_dir()
    with staged_folder(out, overwrite) as tmp:
        shutil.copy2(src / RUN_FILE, tmp / RUN_FILE)
        shutil.copytree(src / "profiles", tmp / "profiles")
        shutil.copytree(src / "climate", tmp / "climate")
        for extra in ("regions", "terrain"):  # invented districts and relief
            if (src / extra).is_dir():
                shutil.copytree(src / extra, tmp / extra)
        readme = src / "README.md"
        if readme.is_file():
            shutil.copy2(readme, tmp / "ABOUT_THE_DATA.md")
    return out / RUN_FILE


def run_demo(out: str | Path = "suitmap-demo", *, overwrite: bool = False,
             progress: bool = False) -> Path:
    """Prepare the demo folder and run it; return the outputs' manifest path."""
    from suitmap.pipeline.analysis import run

    out = Path(out).expanduser().resolve()
    run_file = prepare_demo(out, overwrite=overwrite)
    try:
        return run(run_file, overwrite=False, progress=progress)
    except BaseException:
        shutil.rmtree(out, ignore_errors=True)
        raise
