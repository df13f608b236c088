"""The self-contained ``report.html`` and the ``methods.md`` paragraph of an output folder.

Both are built from the folder alone (``manifest.json``, the PNG maps, the
optional ``regions.csv``/``ranges.csv`` tables), so ``suitmap report OUTDIR``
can rebuild them at any time and ``suitmap run`` writes them last.  The page
has no network assets: maps are inline ``data:`` PNGs, the style sheet is
inline and there is no script.  Nothing in it depends on the wall clock, so a
rerun gives the same bytes.
"""

from __future__ import annotations

import base64
import csv
import html
import json
import os
from pathlib import Path

from suitmap._version import __version__
from suitmap.errors import OutputError
from suitmap.layers.metadata import LAYER_ATTRS, layer_attrs
from suitmap.writers.atomic import atomic_write_text, sha256_file
from suitmap.writers.labels import display_unit, short_label
from suitmap.writers.methods import METHOD_TEXT, methods_text

__all__ = ["write_report", "report_html", "layer_readme_lines"]

_CSS = """
body{font-family:sans-serif;max-width:62rem;margin:1.5rem auto;padding:0 1rem;color:#222;
line-height:1.45}
h1{font-size:1.6rem}h2{border-bottom:1px solid #ccc;padding-bottom:.2rem;margin-top:2rem}
table{border-collapse:collapse;margin:.6rem 0;font-size:.9rem}
th,td{border:1px solid #ccc;padding:.25rem .5rem;text-align:left;vertical-align:top}
th{background:#f0f0f0}.caution{border:2px solid #d55e00;background:#fff4ec;padding:.6rem 1rem}
figure{display:inline-block;margin:.5rem;width:46%;min-width:20rem;vertical-align:top}
figure img{width:100%;height:auto;border:1px solid #ddd}figcaption{font-size:.85rem}
code{font-size:.85rem;word-break:break-all}td{overflow-wrap:anywhere}
table.methods td:nth-child(2){white-space:nowrap}
table.files td:last-child{font-family:monospace;font-size:.75rem;word-break:break-all}
@media print{figure{width:47%;page-break-inside:avoid}}
"""


def _esc(value) -> str:
    return html.escape(str(value), quote=True)


def _table(header: list[str], rows: list[list], cls: str = "") -> str:
    head = "".join(f"<th>{_esc(h)}</th>" for h in header)
    body = "".join("<tr>" + "".join(f"<td>{_esc(c)}</td>" for c in row) + "</tr>" for row in rows)
    attr = f' class="{cls}"' if cls else ""
    return f"<table{attr}><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _json_attr(attrs: dict, key: str, default):
    try:
        return json.loads(attrs.get(key, "")) if attrs.get(key) else default
    except ValueError:
        return default


def _flatten(d, prefix=""):
    for k, v in d.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            yield from _flatten(v, key + ".")
        elif v is not None:
            yield key, v


def _layer_description(layer: str) -> tuple[str, str]:
    base = layer
    for prefix in ("ensemble_median_", "ensemble_p10_", "ensemble_p90_", "model_agreement_",
                   "robust_change_"):
        if base.startswith(prefix):
            base = base[len(prefix):]
    try:
        attrs = layer_attrs(base)
    except KeyError:
        return "", ""
    unit = "class" if "flag_values" in attrs else display_unit(attrs.get("units")) or "1"
    return unit, str(attrs.get("long_name", ""))


def layer_readme_lines() -> list[str]:
    """Lines of the output README: every layer with unit, meaning and class codes."""
    lines = ["Layers (unit; meaning; class codes, 255 = no data):"]
    for name, attrs in LAYER_ATTRS.items():
        unit = "class" if "flag_values" in attrs else display_unit(attrs.get("units")) or "1"
        lines.append(f"  {name} [{unit}]: {attrs.get('long_name', '')}")
        if "flag_values" in attrs:
            codes = ", ".join(f"{v} {m}" for v, m in zip(attrs["flag_values"],
                                                         attrs["flag_meanings"].split()))
            lines.append(f"      codes: {codes}")
    lines += ["  change_<layer>: scenario minus baseline, unit of the layer",
              "  first_generation_day is empty (NaN) both where climate data are missing and",
              "  where no generation completes in any season: first_generation_day_status tells",
              "  which (0 occurs, 1 never, 255 no data); the maps show 'never' in its own colour.",
              ""]
    return lines


def _maps_section(root: Path, entries: list[dict]) -> str:
    parts = []
    groups: dict[str, list[dict]] = {}
    for e in entries:
        if e["format"] == "png" and e["path"].count("/") == 1:
            groups.setdefault(e["period_or_comparison"], []).append(e)
    for group in sorted(groups):
        parts.append(f"<h3>{_esc(group)}</h3>")
        for e in groups[group]:
            data = base64.b64encode((root / e["path"]).read_bytes()).decode("ascii")
            label = short_label(e["layer"])
            parts.append(f'<figure><img alt="{_esc(label)}, {_esc(group)}" '
                         f'src="data:image/png;base64,{data}">'
                         f"<figcaption>{_esc(label)} — <code>{_esc(e['path'])}</code>"
                         "</figcaption></figure>")
    return "\n".join(parts) if parts else "<p>No maps were written (png not in output.formats).</p>"


def _csv_section(root: Path) -> str:
    parts = []
    for name in ("regions.csv", "ranges.csv"):
        path = root / name
        if not path.is_file():
            continue
        with open(path, newline="", encoding="utf-8") as fh:
            rows = list(csv.reader(fh))
        if rows:
            parts.append(f"<h3>{_esc(name)}</h3>" + _table(rows[0], rows[1:201], "data"))
    return "\n".join(parts)


def _markdown_lite(text: str) -> str:
    """The methods paragraph as HTML: headings, paragraphs and list items only."""
    out, items = [], []
    for block in text.split("\n\n"):
        block = block.strip()
        if not block or block == "# Methods":
            continue
        if block.startswith("## "):
            out.append(f"<h3>{_esc(block[3:])}</h3>")
        elif block.startswith("- "):
            items = [ln[2:] for ln in block.splitlines() if ln.startswith("- ")]
            out.append("<ul>" + "".join(f"<li>{_esc(i)}</li>" for i in items) + "</ul>")
        else:
            out.append(f"<p>{_esc(block)}</p>")
    return "\n".join(out)


def report_html(root: str | os.PathLike, manifest: dict) -> str:
    """The report page of the output folder *root* with manifest *manifest*."""
    root = Path(root)
    attrs = manifest.get("attrs", {})
    entries = [e for e in manifest.get("entries", [])
               if e["path"] not in ("report.html", "manifest.json")]
    organism = attrs.get("organism", "")
    periods = _json_attr(attrs, "periods", [])
    profile = _json_attr(attrs, "profile", {})
    methods = _json_attr(attrs, "methods", {})
    caution = attrs.get("caution", "")
    out = [f"<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">"
           f"<meta name=\"viewport\" content=\"width=device-width,initial-scale=1\">"
           f"<title>suitmap report: {_esc(organism)}</title><style>{_CSS}</style></head><body>",
           f"<h1>suitmap report: {_esc(organism)}</h1>",
           f'<p class="caution"><strong>Caution.</strong> {_esc(caution)}</p>',
           "<h2 id=\"summary\">Run summary</h2>",
           _table(["item", "value"], [
               ["suitmap version", attrs.get("suitmap_version", __version__)],
               ["run file", attrs.get("run_file", "")],
               ["profile file", attrs.get("profile_file", "")],
               ["organism", organism],
               ["lower / upper developmental threshold (°C)",
                f"{attrs.get('lower_threshold_degC', '')} / {attrs.get('upper_threshold_degC', '')}"],
               ["degree-days per generation (°C·day)", attrs.get("degree_days_per_generation", "—")],
               ["suitable level (suitability)", attrs.get("suitable_level", "")],
               ["comparisons", ", ".join(_json_attr(attrs, "comparisons", [])) or "—"],
               ["ensembles", ", ".join(_json_attr(attrs, "ensembles", [])) or "—"],
           ], "summary"),
           "<h2 id=\"inputs\">Inputs and their QA</h2>",
           _table(["period", "kind", "years", "model", "pathway", "season-years", "calendar",
                   "input files (relative to the run file)", "QA notes"],
                  [[p.get("name"), p.get("kind"), p.get("years"), p.get("model"),
                    p.get("pathway"), p.get("seasons"), p.get("calendar"),
                    "; ".join(p.get("inputs", [])) or "—",
                    "; ".join(f"{k}: {v}" for k, v in p.get("qa", {}).items()) or "none"]
                   for p in periods], "inputs"),
           "<h2 id=\"profile\">Organism profile and its sources</h2>",
           _table(["key", "value"], [[k, v] for k, v in _flatten(profile)], "profile"),
           "<h2 id=\"methods\">Method behind each layer</h2>",
           _table(["layer", "unit", "meaning", "method"],
                  [[name, *_layer_description(name), METHOD_TEXT.get(name, "")]
                   for name in sorted({e["layer"] for e in entries if e["format"] == "geotiff"})],
                  "methods"),
           "<p>" + _esc("; ".join(f"{k}: {v}" for k, v in methods.items())) + "</p>",
           "<h2 id=\"paragraph\">Methods paragraph (methods.md)</h2>",
           _markdown_lite(methods_text(manifest)),
           "<h2 id=\"maps\">Maps</h2>", _maps_section(root, entries)]
    tables = _csv_section(root)
    if tables:
        out += ["<h2 id=\"tables\">Regional and range tables</h2>", tables]
    out += ["<h2 id=\"files\">Files and checksums</h2>",
            "<p>SHA-256 of every file of the folder (report.html and manifest.json aside).</p>",
            _table(["file", "layer", "format", "bytes", "SHA-256"],
                   [[e["path"], e["layer"], e["format"], e["bytes"], e["sha256"]]
                    for e in entries], "files"),
            f"<p>Written by suitmap {_esc(attrs.get('suitmap_version', __version__))}. "
            "Screening-level estimates; see the caution at the top.</p></body></html>"]
    return "\n".join(out) + "\n"


def _entry(root: Path, name: str, layer: str) -> dict:
    path = root / name
    return {"path": name, "layer": layer, "period_or_comparison": "all", "format": "text"
            if name.endswith(".md") else "html", "sha256": sha256_file(path),
            "bytes": path.stat().st_size}


def write_report(root: str | os.PathLike) -> Path:
    """Write ``methods.md`` and ``report.html`` into *root* and list them in its manifest.

    Returns the path of ``manifest.json``.

    Raises
    ------
    OutputError
        If *root* has no readable ``manifest.json`` (it is not a suitmap output folder).
    """
    root = Path(root)
    path = root / "manifest.json"
    try:
        manifest = json.loads(path.read_text(encoding="utf-8"))
        entries = manifest["entries"]
    except (OSError, ValueError, KeyError, TypeError) as exc:
        raise OutputError(f"{path}: cannot read the manifest of a suitmap output folder "
                          f"({exc}); give the folder a run wrote (output.dir)") from exc
    entries = [e for e in entries if e.get("path") not in ("report.html", "methods.md")]
    manifest["entries"] = entries
    atomic_write_text(root / "methods.md", methods_text(manifest))
    entries.append(_entry(root, "methods.md", "methods"))
    manifest["entries"] = sorted(entries, key=lambda e: e["path"])
    atomic_write_text(root / "report.html", report_html(root, manifest))
    manifest["entries"] = sorted([*manifest["entries"], _entry(root, "report.html", "report")],
                                 key=lambda e: e["path"])
    text = json.dumps(manifest, indent=2, sort_keys=False, ensure_ascii=False, default=str)
    atomic_write_text(path, text + "\n")
    return path
