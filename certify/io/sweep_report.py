"""What a person sees of a sweep: progress, the summary table, maps of the parameter plane."""

from __future__ import annotations

import sys
from collections import Counter
from fractions import Fraction
from pathlib import Path

from rich.console import Console
from rich.table import Table


def cell_label(record: dict) -> str:
    """Return the class a cell is coloured by: its certified statement, or 'undecided'."""
    if record["status"] != "certified":
        return "undecided"
    if "count" in record and "equilibria" not in record:
        return f"{record['count']} equilibria"
    es = record["equilibria"]
    if len(es) == 1:
        return f"{es[0]['type']} (unstable dimension {es[0]['unstable_dimension']})"
    return (" + ".join(e["type"] for e in es) + " (unstable dimensions "
            + ", ".join(str(e["unstable_dimension"]) for e in es) + ")")


def summarize(results) -> dict:
    """Return counts by verdict and unstable dimension, streaming over the cells."""
    rows, per_equilibrium = Counter(), Counter()
    cells = certified = 0
    for record in results:
        cells += 1
        certified += record["status"] == "certified"
        rows[cell_label(record)] += 1
        for e in record.get("equilibria", []):
            key = (e["equilibrium"], e["verdict"], e.get("unstable_dimension"),
                   e.get("type") or e.get("reason"))
            per_equilibrium[key] += 1
    return {"cells": cells, "certified": certified, "undecided": cells - certified,
            "rows": sorted(rows.items(), key=lambda kv: (kv[0] == "undecided", kv[0])),
            "equilibria": [{"equilibrium": k[0], "verdict": k[1], "unstable_dimension": k[2],
                            "what": k[3], "cells": v}
                           for k, v in sorted(per_equilibrium.items(), key=str)]}


class SweepProgress:
    """A progress bar on stderr: cells done, certified, undecided, rate and time left."""

    def __init__(self, enabled: bool):
        self.enabled = enabled and sys.stderr.isatty()
        self.bar = self.task = None

    def __enter__(self):
        if not self.enabled:
            return None
        from rich.progress import (BarColumn, MofNCompleteColumn, Progress, TextColumn,
                                   TimeRemainingColumn)

        self.bar = Progress(TextColumn("sweep"), BarColumn(), MofNCompleteColumn(),
                            TextColumn("cells, {task.fields[certified]} certified, "
                                       "{task.fields[undecided]} undecided, "
                                       "{task.fields[rate]} cells/s"),
                            TimeRemainingColumn(), console=Console(stderr=True),
                            transient=True)
        self.bar.start()
        self.task = self.bar.add_task("sweep", total=None, certified=0, undecided=0, rate="-")
        return self.update

    def update(self, done: int, total: int, stats) -> None:
        import time

        if not hasattr(self, "start"):
            self.start = time.monotonic()
        elapsed = max(time.monotonic() - self.start, 1e-9)
        self.bar.update(self.task, completed=done, total=total, certified=stats.certified,
                        undecided=stats.undecided,
                        rate=f"{stats.cells / elapsed:.0f}" if stats.cells else "-")

    def __exit__(self, *exc):
        if self.bar is not None:
            self.bar.stop()
        return False


def print_summary(result, caution: str, pictures: list[str], note: str | None) -> None:
    """Print the summary table of a sweep and where its files are."""
    console = Console()
    s = result.summary()
    manifest = result.manifest
    st = result.stats
    console.print(f"[bold]{manifest['model']}[/bold]: sweep over "
                  f"{', '.join(manifest['arguments']['grid'])} "
                  f"({manifest['cells']} cells, each a closed parameter box)")
    table = Table(show_header=True, header_style="bold")
    table.add_column("verdict over the whole cell")
    table.add_column("cells", justify="right")
    table.add_column("share", justify="right")
    for label, count in s["rows"]:
        table.add_row(label, str(count), f"{100 * count / max(s['cells'], 1):.1f}%")
    console.print(table)
    console.print(f"{s['certified']} of {s['cells']} cells certified, {s['undecided']} "
                  f"undecided. This run: {st.cells} cells in {st.seconds:.1f} s, "
                  f"{st.proofs} proofs tried on {st.blocks} blocks"
                  + (f", {st.workers_lost} lost worker(s) replaced" if st.workers_lost else ""))
    console.print(f"results: {result.results_path} (one JSON line per cell); certificates in "
                  f"{result.folder / 'certificates'}; check them with certify verify",
                  markup=False)
    for p in pictures:
        console.print(f"map: {p}", markup=False)
    if note:
        console.print(note, markup=False)
    if s["undecided"]:
        console.print("undecided cells are not failures of the model: the proof did not "
                      "succeed there (a bifurcation may lie in the cell, or the cell is too "
                      "wide); --refine D bisects them further.")
    console.print(f"[dim]{caution}[/dim]")


def sweep_json(result, pictures: list[str]) -> dict:
    """Return the summary as one JSON object (the cells stay in results.jsonl)."""
    s = result.summary()
    st = result.stats
    return {"model": result.manifest["model"], "grid": result.manifest["arguments"]["grid"],
            "cells": s["cells"], "certified": s["certified"], "undecided": s["undecided"],
            "summary": [{"verdict": label, "cells": n} for label, n in s["rows"]],
            "equilibria": s["equilibria"],
            "run": {"cells": st.cells, "proofs": st.proofs, "blocks": st.blocks,
                    "seconds": round(st.seconds, 3), "workers_lost": st.workers_lost},
            "results": str(result.results_path), "maps": pictures}


# ---------------------------------------------------------------- maps (matplotlib, optional)

PALETTE = ["#2b7bba", "#e6550d", "#31a354", "#756bb1", "#e7ba52", "#d6616b", "#17becf",
           "#8c6d31"]
UNDECIDED = "#d9d9d9"


def draw_maps(folder: str | Path, manifest: dict | None = None) -> list[str]:
    """Draw map.png and map.svg of a sweep folder; return their paths ([] for > 2 axes).

    Raises ImportError when matplotlib is missing.
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.collections import PatchCollection
    from matplotlib.patches import Patch, Rectangle

    from .sweep_store import read_manifest, read_results

    folder = Path(folder)
    manifest = manifest or read_manifest(folder)
    axes = [a.split("=")[0] for a in manifest["arguments"]["grid"]]
    if len(axes) > 2:
        return []
    labels, patches, rows = _map_patches(read_results(folder), axes, Rectangle)
    fig, ax = plt.subplots(figsize=(7, 7) if len(axes) == 2 else (8, 2.0 + 0.5 * rows))
    if "undecided" in patches:  # undecided cells first, hatched; certified parts on top
        ax.add_collection(PatchCollection(patches.pop("undecided"), facecolor=UNDECIDED,
                                          edgecolor="#636363", hatch="///", linewidth=0.0))
    for label, items in sorted(patches.items()):
        ax.add_collection(PatchCollection(items, facecolor=labels[label], edgecolor="none"))
    _decorate(ax, manifest, axes, labels, rows, Patch)
    fig.tight_layout()
    out = []
    for ext in ("png", "svg"):
        path = folder / f"map.{ext}"
        tmp = folder / f".tmp-map.{ext}"
        fig.savefig(tmp, dpi=130, bbox_inches="tight")
        tmp.replace(path)
        out.append(str(path))
    plt.close(fig)
    return out


def _map_patches(records, axes: list[str], rectangle) -> tuple[dict, dict, int]:
    """Return the colour of each label, the rectangles of each label, and the rows (one axis:
    one row per tracked equilibrium)."""
    labels, patches = {}, {}

    def colour(label):
        if label not in labels:
            labels[label] = UNDECIDED if label == "undecided" else \
                PALETTE[sum(1 for k in labels if k != "undecided") % len(PALETTE)]
        return labels[label]

    def rect(params, row=0):
        if len(axes) == 2:
            (x0, x1), (y0, y1) = ([float(Fraction(v)) for v in params[a]] for a in axes)
        else:
            x0, x1 = (float(Fraction(v)) for v in params[axes[0]])
            y0, y1 = row, row + 0.8
        return rectangle((x0, y0), x1 - x0, y1 - y0)

    rows = 1
    for record in records:
        label = cell_label(record)
        if len(axes) == 1 and "equilibria" in record:
            rows = max(rows, len(record["equilibria"]))
            for e in record["equilibria"]:
                lab = (f"{e['type']} (unstable dimension {e['unstable_dimension']})"
                       if e["verdict"] == "hyperbolic" else "undecided")
                colour(lab)
                patches.setdefault(lab, []).append(rect(record["parameters"],
                                                        e["equilibrium"] - 1))
                for part in e.get("parts", []):
                    pl = f"{part['type']} (unstable dimension {part['unstable_dimension']})"
                    colour(pl)
                    patches.setdefault(pl, []).append(rect(part["parameters"],
                                                           e["equilibrium"] - 1))
            continue
        colour(label)
        patches.setdefault(label, []).append(rect(record["parameters"]))
        if label == "undecided":
            parts = record.get("parts") or [p for e in record.get("equilibria", [])
                                            for p in e.get("parts", [])]
            for part in parts:
                pl = (f"{part['count']} equilibria" if "count" in part and "type" not in part
                      else f"{part['type']} (unstable dimension {part['unstable_dimension']})")
                colour(pl)
                patches.setdefault(pl, []).append(rect(part["parameters"]))
    return labels, patches, rows


def _decorate(ax, manifest: dict, axes: list[str], labels: dict, rows: int, patch) -> None:
    """Set the limits, labels, legend and title of a sweep map."""
    grid = manifest["arguments"]["grid"]
    ranges = []
    for g in grid:
        lo, hi = g.split("=")[1].split(":")[0].split("..")
        ranges.append((float(Fraction(lo)), float(Fraction(hi))))
    ax.set_xlim(*ranges[0])
    ax.set_xlabel(axes[0])
    if len(axes) == 2:
        ax.set_ylim(*ranges[1])
        ax.set_ylabel(axes[1])
    else:
        ax.set_ylim(-0.2, rows)
        ax.set_yticks([r + 0.4 for r in range(rows)])
        ax.set_yticklabels([f"equilibrium {r + 1}" for r in range(rows)]
                           if manifest["arguments"]["mode"] == "guess" else ["count"])
    handles = [patch(facecolor=c, label=lab, hatch="///" if lab == "undecided" else None,
                     edgecolor="#636363" if lab == "undecided" else c)
               for lab, c in sorted(labels.items(), key=lambda kv: kv[0] == "undecided")]
    ax.legend(handles=handles, fontsize=8,
              **({"loc": "upper center", "bbox_to_anchor": (0.5, -0.1)} if len(axes) == 2
                 else {"loc": "center left", "bbox_to_anchor": (1.01, 0.5)}),
              ncol=1 if max(len(h.get_label()) for h in handles) > 40 else 2,
              title="certified for every parameter in the cell (or part)", title_fontsize=8)
    ax.set_title(f"{manifest.get('model_name', manifest['model'])}\n{manifest['cells']} cells, "
                 "each a closed parameter box", fontsize=10)
