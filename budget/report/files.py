"""Report files of a run: workbook, Markdown, CSV and PNG plots.

Every destination is checked before anything is written (an existing file needs ``force``;
the error names it and ``--force``), and each file is written through a temporary file in
its own folder and moved into place (:mod:`budget.report.safe_write`).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from budget.errors import BudgetInputError
from budget.report.safe_write import atomic_write, check_targets
from budget.results import RunResult

__all__ = ["write_reports"]


def _text_writer(render: Callable[[], str], encoding: str = "utf-8") -> Callable[[Path], None]:
    def write(tmp: Path) -> None:
        with open(tmp, "w", encoding=encoding, newline="") as fh:
            fh.write(render())

    return write


def write_reports(result: RunResult, *, xlsx: str | Path | None = None, md: str | Path | None = None,
                  csv: str | Path | None = None, plots: str | Path | None = None,
                  force: bool = False) -> list[Path]:
    """Write the requested report files.

    Parameters
    ----------
    result : RunResult
    xlsx, md, csv : path, optional
        The workbook, the Markdown tables, the budget rows as CSV.
    plots : path, optional
        A folder for the PNG plots (made if missing).
    force : bool
        Replace existing files.

    Returns
    -------
    list of Path
        The files written, in order.

    Raises
    ------
    BudgetInputError
        An existing file without ``force``, a missing folder, or a ``plots`` path that is a
        file; raised before any file is written.
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
    pictures: list[tuple[Path, Callable[[Path], None]]] = []
    folder = Path(plots) if plots is not None else None
    if folder is not None:
        if folder.exists() and not folder.is_dir():
            raise BudgetInputError(f"The --plots path '{folder}' exists and is not a folder.")
        from budget.report.plots import plot_plan

        pictures = [(folder / name, draw) for name, draw in plot_plan(result)]
    targets = [p for p, _ in plan + pictures]
    if len(set(map(_key, targets))) != len(targets):
        raise BudgetInputError("Two report outputs name the same file; give each its own path.")
    check_targets([p for p, _ in plan], force)
    if folder is not None and folder.is_dir():  # a folder still to be made holds no file to replace
        check_targets([p for p, _ in pictures], force)
    if folder is not None:
        folder.mkdir(parents=True, exist_ok=True)
    plan += pictures
    written = []
    for path, write in plan:
        written.append(atomic_write(path, write, force=force))
    return written


def _key(p: Path) -> Path:
    return p.resolve() if p.parent.exists() else p.absolute()
