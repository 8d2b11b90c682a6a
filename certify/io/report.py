"""What people and machines see: terminal tables and JSON for models and results."""

from __future__ import annotations


from rich.console import Console
from rich.table import Table

from ..model.numbers import exact_texts
from ..model import Model
from ..vocabulary import axis_word, plural, type_word
from ..model.decimal import bounds_text, interval_text, membership_text, value_text


def _console() -> Console:
    import shutil

    return Console(highlight=False, width=max(100, shutil.get_terminal_size((100, 24)).columns))


def model_json(model: Model) -> dict:
    """Return the parsed model as JSON data (exact values as text)."""
    from ..model.symbolic import jacobian_sympy

    jac = jacobian_sympy(model)
    return {"model": model.source, "name": model.name, "kind": model.kind,
            "variables": list(model.variables),
            "parameters": exact_texts(model.parameters),
            "equations": dict(model.equations),
            "jacobian": [[str(jac[i, j]) for j in range(model.dimension)]
                         for i in range(model.dimension)],
            "guesses": list(model.guesses),
            "region": (exact_texts(model.region)
                       if model.region else None)}


def print_model(model: Model) -> None:
    """Print the model: variables, exact parameters, equations, symbolic Jacobian."""
    from ..model.symbolic import jacobian_sympy

    con = _console()
    what = "x' = f(x, p)" if model.kind == "flow" else "x -> g(x, p)"
    con.print(f"[bold]{model.name}[/bold]  ({model.source})")
    con.print(f"kind: {model.kind} ({what}); variables: {', '.join(model.variables)}")
    table = Table(show_edge=False)
    table.add_column("name")
    table.add_column("value")
    for p, (lo, hi) in model.parameters.items():
        table.add_row(p, value_text(lo, hi))
    if model.parameters:
        con.print("[bold]parameters (exact)[/bold]")
        con.print(table)
    con.print("[bold]equations[/bold]")
    table = Table(show_edge=False)
    table.add_column("variable")
    table.add_column("right-hand side" if model.kind == "flow" else "next value")
    for v in model.variables:
        lhs = f"{v}'" if model.kind == "flow" else f"{v} ->"
        table.add_row(lhs, model.equations[v])
    con.print(table)
    jac = jacobian_sympy(model)
    con.print("[bold]Jacobian (symbolic, exact)[/bold]")
    table = Table(show_edge=False)
    table.add_column("")
    for v in model.variables:
        table.add_column(f"d/d{v}")
    for i, v in enumerate(model.variables):
        table.add_row(v, *[str(jac[i, j]) for j in range(model.dimension)])
    con.print(table)
    if model.guesses:
        con.print("guesses: " + "; ".join(", ".join(f"{k}={val:g}" for k, val in g.items())
                                          for g in model.guesses))
    if model.region:
        con.print("region: " + ", ".join(f"{v} in {value_text(*model.region[v])}"
                                         for v in model.variables))


def verdict_text(r) -> str:
    """Return the one-line verdict of a result."""
    if r.verdict == "hyperbolic":
        return (f"hyperbolic {r.type}: stable dimension {r.stable_dimension}, "
                f"unstable dimension {r.unstable_dimension}")
    if r.verdict == "not hyperbolic":
        return f"not hyperbolic (proved): {r.message}"
    return f"undecided ({r.reason}): {r.message}"


def print_results(model: Model, results: list, caution: str) -> None:
    """Print one table per result, then the caution."""
    con = _console()
    con.print(f"[bold]{model.name}[/bold]  ({model.source}), {model.kind} in "
              f"{', '.join(model.variables)}")
    if model.parameters:
        con.print("parameters: " + ", ".join(f"{p} = {value_text(lo, hi)}"
                                             for p, (lo, hi) in model.parameters.items()))
    point = "periodic point" if results and results[0].period > 1 else (
        "equilibrium" if model.kind == "flow" else "fixed point")
    for k, r in enumerate(results, 1):
        start = ", ".join(f"{v}={x:g}" for v, x in r.guess.items())
        colour = {"hyperbolic": "green", "not hyperbolic": "yellow"}.get(r.verdict, "red")
        con.print()
        period = f" of period {r.period}" if r.period > 1 else ""
        con.print(f"[bold]{point.capitalize()} {k}{period}[/bold] (Newton from {start})")
        con.print(f"  [{colour}]{verdict_text(r)}[/{colour}]")
        if r.same_as is not None:
            con.print(f"  the same equilibrium as {point} {r.same_as} (this enclosure lies "
                      "in that one's uniqueness box)")
        if r.enclosure:
            table = Table(show_edge=False, box=None, padding=(0, 2))
            table.add_column("  variable")
            table.add_column("enclosure (rounded outward)")
            for v in model.variables:
                table.add_row(f"  {v}", interval_text(*r.enclosure[v]))
            con.print(table)
        if r.eigenvalues:
            con.print("  eigenvalues (enclosures, for information; the verdict rests on the "
                      "certificate):" if r.period == 1 and model.kind == "flow" else
                      "  multipliers (enclosures, for information; the verdict rests on the "
                      "certificate):")
            for e in r.eigenvalues:
                con.print(f"    {_complex_text(e)}")
        if any(lo != hi for lo, hi in r.parameters.values()) and r.verdict == "hyperbolic":
            how = (f"{r.first_order_pieces} in first-order branch form, "
                   f"{r.pieces - r.first_order_pieces} with plain intervals")
            con.print(f"  proved for every parameter in the box, in {r.pieces} piece"
                      f"{'s' if r.pieces > 1 else ''} ({how})")
        if r.certificate_path:
            con.print(f"  certificate: {r.certificate_path} (passed the checker)")
    con.print()
    if any(r.certificate_path for r in results):
        con.print("Re-check the certificates independently with: certify verify FILE ...")
    con.print(f"[dim]{caution}[/dim]")


def _complex_text(e: dict) -> str:
    re, im = interval_text(*e["re"]), interval_text(*e["im"])
    if e["im"][0] <= 0 <= e["im"][1]:
        return re if e["im"][1] - e["im"][0] < 1e-6 else f"{re} + i{im}"
    return f"{re} + i{im}"


def results_json(model: Model, results: list) -> dict:
    """Return the JSON result object that --json prints (README, "Use")."""
    out = []
    for r in results:
        out.append({
            "verdict": r.verdict, "reason": r.reason, "message": r.message or None,
            "kind": r.kind, "period": r.period, "type": r.type,
            "stable_dimension": r.stable_dimension, "unstable_dimension": r.unstable_dimension,
            "parameters": exact_texts(r.parameters),
            "guess": r.guess,
            "enclosure": ({v: list(bounds_text(*r.enclosure[v])) for v in model.variables}
                          if r.enclosure else None),
            "eigenvalues": [{"re": list(bounds_text(*e["re"])), "im": list(bounds_text(*e["im"]))}
                            for e in r.eigenvalues],
            "pieces": r.pieces, "first_order_pieces": r.first_order_pieces,
            "precision": r.precision, "same_as": r.same_as,
            "certificate": r.certificate_path})
    return {"model": model.source, "results": out}


def claim_text(verified) -> str:
    """Return a short description of what a verified certificate proves."""
    c = verified.claim
    if c["verdict"] == "hyperbolic":
        n_p = f", {verified.pieces} pieces" if verified.pieces > 1 else ""
        word = type_word(verified.kind, c["stable_dimension"], c["unstable_dimension"])
        box = ", ".join(f"{p}={value_text(lo, hi)}" for p, (lo, hi) in verified.parameters.items())
        return (f"hyperbolic {word}, stable dimension {c['stable_dimension']}, "
                f"unstable dimension {c['unstable_dimension']}{n_p}; {box}")
    if c["verdict"] == "count":
        return (f"exactly {plural(c['count'], 'equilibrium', 'equilibria')} in the region, "
                f"stable dimensions {c['stable_dimensions']}, "
                f"{plural(verified.pieces, 'parameter piece')}")
    return f"not hyperbolic (proved): {axis_word(c['eigenvalue'])}"


class _NoProgress:
    def __enter__(self):
        return None

    def __exit__(self, *exc):
        return False


class _Progress:
    """A progress bar on stderr (boxes done, boxes waiting, zeros found), shown after 2 s."""

    def __init__(self):
        import time

        from rich.progress import Progress, TextColumn, TimeElapsedColumn

        self.time = time
        self.bar = Progress(TextColumn("scanning: {task.fields[done]} boxes done, "
                                       "{task.fields[left]} waiting, {task.fields[zeros]} "
                                       "zeros found"), TimeElapsedColumn(),
                            console=Console(stderr=True), transient=True)
        self.start, self.task, self.shown = time.monotonic(), None, False

    def __enter__(self):
        return self.update

    def update(self, done: int, left: int, zeros: int) -> None:
        if not self.shown and self.time.monotonic() - self.start > 2:
            self.bar.start()
            self.task = self.bar.add_task("scan", total=None, done=0, left=0, zeros=0)
            self.shown = True
        if self.shown:
            self.bar.update(self.task, done=done, left=left, zeros=zeros)

    def __exit__(self, *exc):
        if self.shown:
            self.bar.stop()
        return False


def scan_progress(enabled: bool):
    """Return a context giving a progress callback for scans (None when not a terminal)."""
    import sys

    return _Progress() if enabled and sys.stderr.isatty() else _NoProgress()


def _kind_word(kind: str, stable: int | None, n: int) -> str:
    return "unclassified" if stable is None else type_word(kind, stable, n - stable)


def _box_text(box, variables, sep: str = ", ") -> str:
    return sep.join(membership_text(v, lo, hi) for v, (lo, hi) in zip(variables, box))


def print_scan(result, caution: str) -> None:
    """Print the count, then one row per equilibrium found."""
    model, con = result.model, _console()
    n = model.dimension
    con.print(f"[bold]{model.name}[/bold]  ({model.source}), {model.kind} in "
              f"{', '.join(model.variables)}")
    if model.parameters:
        con.print("parameters: " + ", ".join(f"{p} = {value_text(lo, hi)}"
                                             for p, (lo, hi) in model.parameters.items()))
    con.print("region: " + _box_text([result.region[v] for v in model.variables],
                                     model.variables))
    what = ("equilibrium", "equilibria") if model.kind == "flow" else ("fixed point", None)
    if result.count is not None:
        every = " for every parameter in the box" if any(
            lo != hi for lo, hi in model.parameters.values()) else ""
        pieces = f" ({result.pieces} parameter pieces)" if result.pieces > 1 else ""
        con.print(f"[green]certified: exactly {plural(result.count, *what)} in the region"
                  f"{every}{pieces}[/green]")
    else:
        con.print(f"[red]count not certified ({result.reason}): {result.message}[/red]")
    table = Table(show_edge=False, box=None, padding=(0, 2))
    table.add_column("  #")
    table.add_column("kind")
    table.add_column("stable/unstable")
    table.add_column("where", no_wrap=True)
    for k, z in enumerate(result.zeros, 1):
        if z.inside is False:
            continue
        dims = ("-" if z.stable_dimension is None else
                f"{z.stable_dimension}/{n - z.stable_dimension}")
        word = _kind_word(model.kind, z.stable_dimension, n)
        if z.stable_dimension is None and z.reason:
            word = z.reason if z.not_hyperbolic else f"{word} ({z.reason})"
        if z.inside is None:
            word += " (on the border of the region)"
        table.add_row(f"  {k}", word, dims,
                      _box_text(z.enclosure or z.box, model.variables, "\n"))
    if result.zeros:
        if result.pieces > 1:
            con.print("  (enclosures below are for the first parameter piece)")
        con.print(table)
    if result.undecided_boxes:
        con.print(f"undecided boxes ({len(result.undecided_boxes)}; first few shown):")
        for box in result.undecided_boxes[:5]:
            con.print("  " + _box_text(box, model.variables))
    con.print(f"{result.boxes} boxes in {result.seconds:.2f} s")
    if result.certificate_path:
        con.print(f"certificate: {result.certificate_path} (passed the checker; re-check with "
                  "certify verify)")
    con.print(f"[dim]{caution}[/dim]")


def scan_json(result) -> dict:
    """Return the JSON object of a scan (README, "Use": count, undecided_boxes)."""
    model = result.model
    zeros = []
    for z in result.zeros:
        box = z.enclosure or z.box
        zeros.append({"inside": z.inside,
                      "type": _kind_word(model.kind, z.stable_dimension, model.dimension)
                      if z.stable_dimension is not None else None,
                      "stable_dimension": z.stable_dimension,
                      "unstable_dimension": (None if z.stable_dimension is None
                                             else model.dimension - z.stable_dimension),
                      "reason": z.reason, "not_hyperbolic": z.not_hyperbolic,
                      "enclosure": {v: list(bounds_text(lo, hi))
                                    for v, (lo, hi) in zip(model.variables, box)}})
    return {"model": model.source, "count": result.count, "reason": result.reason,
            "message": result.message or None,
            "region": exact_texts(result.region),
            "parameters": exact_texts(model.parameters),
            "equilibria": zeros, "pieces": result.pieces, "boxes": result.boxes,
            "undecided_boxes": [exact_texts(dict(zip(model.variables, box)))
                                for box in result.undecided_boxes],
            "certificate": result.certificate_path}
