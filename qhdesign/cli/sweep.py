"""``qhdesign sweep``, ``qhdesign tolerance`` and ``qhdesign plot-sweep``: design sweeps to CSV.

``sweep SPEC`` runs a sweep spec (docs/sweeps.md); ``sweep STACK --param ...`` is the shorthand
for a grid, zip or Latin hypercube over a stack without writing a spec. ``tolerance STACK`` runs a
growth-tolerance Monte Carlo and prints percentiles, the yield against ``--require`` criteria and
the sensitivity ranking. ``plot-sweep CSV`` draws design windows, line plots and histograms.
"""

from __future__ import annotations

import json
import math
import os
from pathlib import Path

import typer

from .common import check_figure_path, guarded, renamed

#: A sweep estimated to run longer than this (s) starts only with --yes.
LONG_SWEEP_S = 3600.0


def _duration(seconds: float) -> str:
    if seconds < 90:
        return f"{seconds:.0f} s"
    if seconds < 5400:
        return f"{seconds / 60:.0f} min"
    return f"{seconds / 3600:.1f} h"


def _mpi_size() -> int:
    """Ranks of an mpiexec launch, from the launcher's environment (1 outside mpiexec)."""
    for var in ("PMI_SIZE", "OMPI_COMM_WORLD_SIZE", "PMIX_SIZE"):
        v = os.environ.get(var)
        if v and v.isdigit():
            return int(v)
    return 1


def _estimate(plan, workers: int | None, executor: str) -> tuple[float, str]:
    """Run time of the whole sweep from one timed evaluation of the nominal design (the same
    probe the runner sizes its chunks with): seconds and a sentence."""
    from qhdesign.sweep.runner import probe

    _, status, _, t = probe(plan)
    n = len(plan)
    w = 1 if executor == "serial" else (workers or os.cpu_count() or 1)
    w = max(1, min(w, n))
    total = t * n / w
    note = "" if status == "ok" else f" (the timed design ended '{status}')"
    return total, (
        f"estimated run time about {_duration(total)}: one design {t:.3g} s x {n} designs on "
        f"{w} worker{'s' if w > 1 else ''}{note}"
    )


_EXECUTOR_HELP = (
    "auto: MPI when started under mpiexec with >1 rank, else local processes (serial for "
    "--workers 1); or serial, local, mpi."
)


def _mpi_rank() -> int:
    for var in ("PMI_RANK", "OMPI_COMM_WORLD_RANK", "PMIX_RANK"):
        v = os.environ.get(var)
        if v and v.isdigit():
            return int(v)
    return 0


def _workers_silent(func):
    """Under mpiexec, only rank 0 reports a user error; other ranks exit 2 without a word."""
    import functools

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        from qhdesign.errors import QHDesignError

        try:
            return func(*args, **kwargs)
        except QHDesignError:
            if _mpi_rank() > 0:
                raise typer.Exit(2) from None
            raise

    return wrapper


def _parse_option_pairs(pairs: list[str] | None, option: str) -> dict:
    from qhdesign.errors import InputError

    out: dict = {}
    for item in pairs or []:
        key, sep, value = item.partition("=")
        if not sep or not key.strip():
            raise InputError(f"expected KEY=VALUE, got '{item}'", source=f"option {option}")
        try:
            out[key.strip()] = json.loads(value)
        except ValueError:
            out[key.strip()] = value.strip()
    return out


def _parse_param(item: str, lhs: bool) -> tuple[str, object]:
    """``PATH=FROM..TO:STEPS``, ``PATH=FROM..TO`` (Latin hypercube) or ``PATH=V1,V2,...``."""
    from qhdesign.errors import InputError

    path, sep, rhs = item.partition("=")
    path, rhs = path.strip(), rhs.strip()
    if not sep or not path or not rhs:
        raise InputError(
            f"expected PATH=FROM..TO:STEPS or PATH=V1,V2,..., got '{item}'", source="option --param"
        )
    if ".." in rhs:
        lo, _, rest = rhs.partition("..")
        hi, _, steps = rest.partition(":")
        spec: dict = {"from": _num_or_text(lo), "to": _num_or_text(hi)}
        if not lhs:
            if not steps.strip().isdigit():
                raise InputError(
                    f"a grid range needs ':STEPS' (e.g. {path}=20nm..40nm:5), got '{item}'",
                    source="option --param",
                )
            spec["steps"] = int(steps)
        return path, spec
    if lhs:
        raise InputError(f"--lhs needs ranges PATH=FROM..TO, got '{item}'", source="option --param")
    return path, [_num_or_text(v) for v in rhs.split(",")]


def _num_or_text(text: str) -> object:
    t = text.strip()
    try:
        return float(t)
    except ValueError:
        return t


def _parse_require(items: list[str] | None) -> dict[str, tuple[float, float]]:
    """``COL=MIN..MAX`` (either end may be empty) -> criteria."""
    from qhdesign.errors import InputError

    out = {}
    for item in items or []:
        col, sep, rng = item.partition("=")
        lo, dots, hi = rng.partition("..")
        try:
            if not sep or not dots:
                raise ValueError
            lo_v = float(lo) if lo.strip() else -math.inf
            hi_v = float(hi) if hi.strip() else math.inf
        except ValueError:
            raise InputError(
                f"expected COLUMN=MIN..MAX (an end may be empty), got '{item}'",
                source="option --require",
            ) from None
        if lo_v > hi_v:
            raise InputError(f"min exceeds max in '{item}'", source="option --require")
        out[col.strip()] = (lo_v, hi_v)
    return out


def _run_with_progress(plan, out: Path, executor: str, workers, chunk, quiet: bool):
    """Run the sweep with a rich progress bar on a terminal, quiet otherwise."""
    from rich.console import Console

    from qhdesign.sweep.runner import run_sweep

    console = Console(stderr=True)
    interactive = console.is_terminal and not quiet
    if not interactive:
        return run_sweep(plan, out, executor=executor, workers=workers, chunk=chunk)
    from rich.progress import (
        BarColumn,
        MofNCompleteColumn,
        Progress,
        TextColumn,
        TimeElapsedColumn,
        TimeRemainingColumn,
    )

    with Progress(
        TextColumn("[bold]{task.description}"),
        BarColumn(),
        MofNCompleteColumn(),
        TextColumn("{task.fields[rate]}"),
        TimeElapsedColumn(),
        TextColumn("ETA"),
        TimeRemainingColumn(),
        console=console,
        transient=False,
    ) as bar:
        task = bar.add_task(plan.name, total=None, rate="")

        def started(todo: int, done: int) -> None:
            bar.update(task, total=todo)

        def progress(n: int, todo: int) -> None:
            bar.advance(task, n)
            t = bar.tasks[task]
            speed = t.speed
            bar.update(task, rate=f"{speed:.1f} designs/s" if speed else "")

        return run_sweep(
            plan,
            out,
            executor=executor,
            workers=workers,
            chunk=chunk,
            progress=progress,
            started=started,
        )


def _finish(summary, plan, out: Path, quiet: bool) -> None:
    if summary is None:  # an MPI worker rank
        return
    if not quiet:
        for line in summary.lines():
            typer.echo(line)
        typer.echo(f"rows in {out}")
    if plan.kind == "montecarlo" and not quiet:
        from qhdesign.sweep.analysis import analyze_tolerance
        from qhdesign.sweep.table import read_sweep_csv

        report = analyze_tolerance(read_sweep_csv(out), plan.criteria)
        for line in report.lines():
            typer.echo(line)


def register(app: typer.Typer) -> None:
    @app.command("sweep")
    @guarded
    @_workers_silent
    def sweep(
        spec: Path = typer.Argument(
            ..., help="Sweep spec TOML (docs/sweeps.md), or a stack TOML with --param."
        ),
        csv_out: Path | None = typer.Option(
            None, "--csv", help="CSV to write or resume (default: <spec name>.csv here)."
        ),
        out: Path | None = typer.Option(None, "--out", hidden=True),
        workers: int | None = typer.Option(
            None, "--workers", help="Local worker processes (default: all cores)."
        ),
        executor: str = typer.Option("auto", "--executor", help=_EXECUTOR_HELP),
        chunk: int | None = typer.Option(
            None, "--chunk", help="Designs per task (default: sized from one evaluation)."
        ),
        stage: str | None = typer.Option(
            None, "--stage", help="Shorthand: stage to evaluate (capacitor, bands, gate, ...)."
        ),
        param: list[str] | None = typer.Option(
            None, "--param", help="Shorthand: PATH=FROM..TO:STEPS or PATH=V1,V2 (repeat: grid)."
        ),
        zipped: bool = typer.Option(False, "--zip", help="Shorthand: zip the --param lists."),
        lhs: int | None = typer.Option(
            None, "--lhs", help="Shorthand: Latin hypercube of N samples over PATH=FROM..TO."
        ),
        seed: int = typer.Option(0, "--seed", help="Seed of --lhs."),
        option: list[str] | None = typer.Option(
            None, "--option", help="Shorthand: stage option KEY=VALUE (VALUE may be JSON)."
        ),
        quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress bar, no summary."),
        check: bool = typer.Option(
            False,
            "--check",
            help="Validate the spec, time one design, print the estimated run time and stop.",
        ),
        yes: bool = typer.Option(
            False, "--yes", help="Start a sweep estimated to run longer than one hour."
        ),
        allow_plugin: list[str] | None = typer.Option(
            None,
            "--allow-plugin",
            help="Allow the plug-in stage of this module to run (it runs code); repeat.",
        ),
    ) -> None:
        """Evaluate every design of a sweep and stream one CSV row per design (resumable)."""
        from qhdesign.errors import InputError
        from qhdesign.sweep.spec import build_plan

        allow = tuple(allow_plugin or ())

        quiet = quiet or _mpi_rank() > 0
        from qhdesign.sweep.spec import read_spec

        out = renamed(csv_out, out, "--csv", "--out")
        raw = read_spec(spec)
        if raw is not None and "sweep" not in raw:
            # shorthand: SPEC is a stack file
            if not param:
                raise InputError(
                    "is a stack file, not a sweep spec; add --param PATH=FROM..TO:STEPS "
                    "(and --stage) or pass a spec with a [sweep] table",
                    source=str(spec),
                )
            params = dict(_parse_param(p, lhs is not None) for p in param)
            space: dict = {
                "kind": "lhs" if lhs else ("zip" if zipped else "grid"),
                "parameters": params,
            }
            if lhs:
                space.update(samples=lhs, seed=seed)
            doc = {
                "sweep": {
                    "name": spec.stem,
                    "stage": stage or "bands",
                    "stack": str(spec.resolve()),
                },
                "options": _parse_option_pairs(option, "--option"),
                "space": space,
            }
            plan = build_plan(doc, source="command line", base_dir=Path.cwd(), allow_plugins=allow)
        else:
            if param or stage or option or lhs:
                raise InputError(
                    "--param/--stage/--option/--lhs are for a stack file; a spec says them itself",
                    source=str(spec),
                )
            plan = build_plan(raw, source=str(spec), base_dir=spec.parent, allow_plugins=allow)
        if check:
            from qhdesign.sweep.runner import check_plan

            note = check_plan(plan)
            if _mpi_rank() == 0:
                typer.echo(
                    f"{plan.source}: valid; {len(plan)} designs ({plan.kind}) of stage "
                    f"'{plan.stage}' over {', '.join(plan.parameters[:6])}"
                    f"{' ...' if len(plan.parameters) > 6 else ''}; {note}"
                )
                if ":" not in plan.stage:  # a plug-in stage is never run (nor imported) by --check
                    typer.echo(_estimate(plan, workers, executor)[1])
            return
        if not yes and _mpi_size() == 1:
            seconds, text = _estimate(plan, workers, executor)
            if seconds > LONG_SWEEP_S:
                raise InputError(
                    f"{text}, above one hour; add --yes to start it (or narrow the space)",
                    source="option --yes",
                )
        out = out or Path(f"{spec.stem}.csv")
        summary = _run_with_progress(plan, out, executor, workers, chunk, quiet)
        _finish(summary, plan, out, quiet)

    @app.command("tolerance")
    @guarded
    @_workers_silent
    def tolerance(
        stack_file: Path = typer.Argument(..., help="Layer-stack TOML file (the nominal design)."),
        samples: int = typer.Option(1000, "--samples", help="Monte Carlo samples (wafers)."),
        seed: int = typer.Option(1, "--seed", help="Random seed (same seed, same samples)."),
        csv_out: Path | None = typer.Option(
            None, "--csv", help="CSV (default <stack>_tolerance.csv)."
        ),
        out: Path | None = typer.Option(None, "--out", hidden=True),
        stage: str = typer.Option("bands", "--stage", help="Stage evaluated per sample."),
        option: list[str] | None = typer.Option(
            None, "--option", help="Stage option KEY=VALUE (VALUE may be JSON)."
        ),
        require: list[str] | None = typer.Option(
            None, "--require", help="Criterion COLUMN=MIN..MAX (an end may be empty); repeat."
        ),
        thickness: str = typer.Option("1.5%", "--thickness", help="1-sigma thickness error."),
        layer_jitter: str = typer.Option(
            "0.5%", "--layer-jitter", help="Per-layer part of the thickness error."
        ),
        al_fraction: float = typer.Option(0.007, "--al-fraction", help="1-sigma Al fraction."),
        doping: str = typer.Option("7%", "--doping", help="1-sigma doping-cell calibration."),
        surface_barrier: str = typer.Option(
            "0.1 eV", "--surface-barrier", help="1-sigma surface barrier."
        ),
        workers: int | None = typer.Option(None, "--workers", help="Local worker processes."),
        executor: str = typer.Option("auto", "--executor", help=_EXECUTOR_HELP),
        json_out: Path | None = typer.Option(None, "--json", help="Write the statistics as JSON."),
        quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress bar."),
        allow_plugin: list[str] | None = typer.Option(
            None,
            "--allow-plugin",
            help="Allow the plug-in stage of this module to run (it runs code); repeat.",
        ),
    ) -> None:
        """Growth-tolerance Monte Carlo of STACK_FILE: percentiles, yield, sensitivity."""
        from qhdesign.io import atomic_write_json
        from qhdesign.sweep.analysis import analyze_tolerance
        from qhdesign.sweep.spec import build_plan
        from qhdesign.sweep.table import read_sweep_csv

        rank = _mpi_rank()
        criteria = _parse_require(require)
        doc = {
            "sweep": {
                "name": f"{stack_file.stem} tolerance",
                "stage": stage,
                "stack": str(stack_file),
            },
            "options": _parse_option_pairs(option, "--option"),
            "space": {
                "kind": "montecarlo",
                "samples": samples,
                "seed": seed,
                "tolerance": {
                    "thickness": thickness,
                    "layer_jitter": layer_jitter,
                    "al_fraction": al_fraction,
                    "doping": doping,
                    "surface_barrier": surface_barrier,
                },
            },
            "criteria": {k: {"min": lo, "max": hi} for k, (lo, hi) in criteria.items()},
        }
        plan = build_plan(
            doc,
            source="command line",
            base_dir=Path.cwd(),
            allow_plugins=tuple(allow_plugin or ()),
        )
        out = renamed(csv_out, out, "--csv", "--out") or Path(f"{stack_file.stem}_tolerance.csv")
        summary = _run_with_progress(plan, out, executor, workers, None, quiet or rank > 0)
        if summary is None:
            return
        if not quiet:
            for line in summary.lines():
                typer.echo(line)
        report = analyze_tolerance(read_sweep_csv(out), plan.criteria)
        for line in report.lines():
            typer.echo(line)
        if json_out is not None:
            atomic_write_json(json_out, report.to_dict())

    @app.command("plot-sweep")
    @guarded
    def plot_sweep(
        csv_file: Path = typer.Argument(..., help="Sweep CSV."),
        x: str | None = typer.Option(None, "--x", help="Parameter path on the x axis."),
        y: str | None = typer.Option(None, "--y", help="Parameter path on the y axis (2D map)."),
        color: list[str] | None = typer.Option(
            None, "--color", help="Output shown (colour map; line or histogram without --y)."
        ),
        contour: list[str] | None = typer.Option(
            None, "--contour", help="OUTPUT=VALUE contour line on the map; repeat."
        ),
        require: list[str] | None = typer.Option(
            None, "--require", help="Feasible if COLUMN=MIN..MAX; the rest is hatched."
        ),
        plot: Path | None = typer.Option(
            None, "--plot", help="Figure file (PNG, SVG or PDF by suffix; default <csv>.png)."
        ),
        out: Path | None = typer.Option(None, "--out", hidden=True),
    ) -> None:
        """Design-window map (--x, --y), line plot (--x) or Monte Carlo histograms of a sweep."""
        from qhdesign.errors import InputError
        from qhdesign.plotting import save_figure
        from qhdesign.plotting.sweep import plot_sweep_table
        from qhdesign.sweep.table import read_sweep_csv

        out = renamed(plot, out, "--plot", "--out")
        if out is not None:
            check_figure_path(out, "--plot")
        if x is not None and y is not None and x == y:
            raise InputError("--x and --y name the same parameter", source="option --y")
        table = read_sweep_csv(csv_file)
        contours = []
        for item in contour or []:
            name, sep, val = item.partition("=")
            try:
                contours.append((name.strip(), float(val)))
            except ValueError:
                raise InputError(
                    f"expected OUTPUT=VALUE, got '{item}'", source="option --contour"
                ) from None
            if not sep:
                raise InputError(f"expected OUTPUT=VALUE, got '{item}'", source="option --contour")
        fig = plot_sweep_table(
            table,
            x=x,
            y=y,
            color=list(color or []),
            contours=contours,
            criteria=_parse_require(require) or None,
        )
        out = out or csv_file.with_suffix(".png")
        save_figure(fig, out)
        typer.echo(f"figure written to {out}")
