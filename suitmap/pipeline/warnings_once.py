"""Warnings about many files, shown once: one line with the count and the first file.

A batch of 32 input files without a grid mapping gives 32 warnings that differ
only in the file name.  :class:`WarningCollector` groups warnings whose text is
the same once file names are taken out, and prints each group as one line
when the command ends.
"""

from __future__ import annotations

import re
import sys

__all__ = ["WarningCollector", "warning_key"]

# a file name with one of the extensions suitmap reads or writes, with any folders before it
_FILE = re.compile(r"(?:[^\s'\":;,()]*[/\\])?[^\s/\\'\":;,()]+\.(?:nc|nc4|tif|tiff|csv|toml|json)\b",
                   re.IGNORECASE)


def warning_key(text: str) -> tuple[str, str | None]:
    """(text with file names replaced by ``<file>``, the first file name or None)."""
    match = _FILE.search(text)
    return _FILE.sub("<file>", text), (match.group(0) if match else None)


class WarningCollector:
    """A ``warnings.showwarning`` replacement that groups warnings; :meth:`flush` prints them."""

    def __init__(self, prefix: str = "suitmap: warning: ", stream=None) -> None:
        self.prefix = prefix
        self.stream = stream
        self._groups: dict[str, list] = {}  # key -> [first text, count, set of files]

    def showwarning(self, message, category, filename, lineno, file=None, line=None) -> None:
        text = str(message).splitlines()[0] if str(message) else category.__name__
        key, first_file = warning_key(text)
        group = self._groups.setdefault(key, [text, 0, set()])
        group[1] += 1
        if first_file:
            group[2].add(first_file)

    def lines(self) -> list[str]:
        """One line per group, in order of first appearance."""
        out = []
        for text, count, files in self._groups.values():
            if len(files) > 1:
                out.append(f"{self.prefix}{text} (the same for {len(files)} files; "
                           "this is the first)")
            else:
                out.append(self.prefix + text)
        return out

    def flush(self) -> None:
        """Print the collected warnings and forget them."""
        stream = self.stream or sys.stderr
        for line in self.lines():
            print(line, file=stream)
        self._groups.clear()
