"""Report files of a run: workbook, Markdown, CSV, HTML and PNG plots.

Every destination is checked before anything is written (an existing file needs ``force``;
the error names it and ``--force``; an input is never written), and the files are written through
temporary files in their own folders and moved into place together, or not at all
(:mod:`budget.report.safe_write`).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from pathlib import Path

from budget.errors import BudgetInputError
from budget.report.safe_write import FileSet, check_targets
from budget.results import RunResult

__all__ = ["check_reports", "write_reports"]


def _text_writer(render: Callable[[], str], encoding: str = "utf-8") -> Callable[[Path], None]:
    def write(tmp: Path) -> None:
        with open(tmp, "w", encoding=encoding, newline="") as fh:
            fh.write(render())

    return write


def check_reports(*, xlsx: str | Path | None = None, md: str | Path | None = None, csv: str | Path | None = None,
                  html: str | Path | None = None, plots: str | Path | None = None, plot_files: Sequence[str] = (),
                  force: bool = False, inputs: Sequence[Path] = ()) -> None:
    """Refuse, before any work, every report path that cannot be written (see :func:`check_targets`).

    ``plot_files`` are the names the run will draw into ``plots`` (:func:`budget.report.plots.plot_names`);
    a ``plots`` folder still to be made holds no file to replace, but its own path must be usable.
    """
    files = [Path(p) for p in (xlsx, md, csv, html) if p is not None]
    if plots is not None:
        folder = Path(plots)
        if folder.is_symlink() and not folder.exists():
            raise BudgetInputError(f"The --plots path '{folder}' is a symbolic link to a missing folder.")
        if folder.exists() and not folder.is_dir():
            raise BudgetInputError(f"The --plots path '{folder}' exists and is not a folder.")
        # the files it will hold, or (a folder still to be made) the place where it is made
        files += [folder / name for name in plot_files] if folder.is_dir() else [folder]
    check_targets(files, force, inputs=inputs)


def write_reports(result: RunResult, *, xlsx: str | Path | None = None, md: str | Path | None = None,
                  csv: str | Path | None = None, html: str | Path | None = None, plots: str | Path | None = None,
                  force: bool = False, inputs: Sequence[Path] = ()) -> list[Path]:
    """Write the requested report files: all of them, or (on any error or signal) none.

    Parameters
    ----------
    result : RunResult
    xlsx, md, csv, html : path, optional
        The workbook, the Markdown tables, the budget rows as CSV, the HTML report to print and sign.
    plots : path, optional
        A folder for the PNG plots (made if missing; its parent must exist).
    force : bool
        Replace existing files.
    inputs : sequence of Path
        The run's input files (rig file, data files, images): never written, even with ``force``.

    Returns
    -------
    list of Path
        The files written, in order.

    Raises
    ------
    BudgetInputError
        An existing file without ``force``, a missing folder, a ``plots`` path that is a file, two
        outputs on one path, an output that is an input (raised before any file is written), or a
        file that cannot be written (a full disk; nothing is then left written).
    """
    plan: list[tuple[Path, Callable[[Path], None]]] = []
    if xlsx is not None:
        def write_xlsx(tmp: Path) -> None:
            from budget.report.workbook import build_workbook, save_workbook

            save_workbook(build_workbook(result), tmp)

        plan.append((Path(xlsx), write_xlsx))
    if md is not None:
        from budget.report.markdown import render_markdown

        plan.append((Path(md), _text_writer(lambda: render_markdown(result))))
    if csv is not None:
        from budget.report.csvout import ENCODING, render_csv

        plan.append((Path(csv), _text_writer(lambda: render_csv(result), ENCODING)))
    if html is not None:
        from budget.report.html import render_html

        plan.append((Path(html), _text_writer(lambda: render_html(result))))
    pictures: list[tuple[Path, Callable[[Path], None]]] = []
    folder = Path(plots) if plots is not None else None
    if folder is not None:
        from budget.report.plots import plot_plan

        pictures = [(folder / name, draw) for name, draw in plot_plan(result)]
    check_reports(xlsx=xlsx, md=md, csv=csv, html=html, plots=plots, plot_files=[p.name for p, _ in pictures],
                  force=force, inputs=inputs)
    with FileSet(force) as files:
        if folder is not None:
            files.make_folder(folder)
        for path, write in plan + pictures:
            files.add(path, write)
        return files.commit()
