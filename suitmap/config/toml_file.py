"""Read a TOML file into a dict, turning parse errors into suitmap errors."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Any

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib


def read_toml(path: str | Path, error_type: type[Exception], what: str) -> dict[str, Any]:
    """Parse ``path`` as TOML; raise ``error_type`` with a one-line message on failure."""
    path = Path(path)
    if not path.is_file():
        raise error_type(f"{what} {path}: file not found; check the path")
    try:
        with path.open("rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise error_type(f"{what} {path}: not valid TOML ({exc}); fix the syntax") from None
    except (UnicodeDecodeError, ValueError) as exc:  # binary garbage, NUL bytes
        raise error_type(f"{what} {path}: not a TOML text file ({type(exc).__name__}); "
                         "give a UTF-8 TOML file") from None
    except OSError as exc:
        raise error_type(f"{what} {path}: cannot be read ({exc.strerror})") from None
