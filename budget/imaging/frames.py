"""Real frames of a still target: read, locate, summarize (Type A), write per-frame CSV.

Pixel convention: the centre of pixel ``(i, j)`` is at ``x = j``, ``y = i`` in
full-image coordinates (as in :mod:`budget.imaging.locate`).
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from dataclasses import asdict, dataclass
from pathlib import Path

import numpy as np
from scipy import stats

from budget.errors import BudgetInputError, field_error
from budget.imaging.locate import centre_of_mass, gaussian_fit, threshold_centroid

__all__ = ["FramesResult", "check_position_label", "frames_csv_text", "locate_frames", "read_frame"]

_METHODS = ("com", "gauss", "threshold")
#: A target must stand this many robust standard deviations above the ROI border.
DETECTION_MARGIN_SD = 5.0
_CSV_COLUMNS = "position,frame,x_px,y_px"


def _read_png(path: Path) -> np.ndarray:
    from PIL import Image

    with Image.open(path) as im:
        mode = im.mode
        if mode in ("L", "I;16", "I;16B", "I;16L", "I"):
            arr = np.array(im)
        else:
            raise field_error("path", "a grayscale PNG (8 or 16 bit); convert colour images "
                              "to grayscale first", f"{path} (mode {mode})", "read_frame")
    if mode == "I":  # Pillow may open 16-bit PNG as 32-bit integers
        if arr.min() < 0 or arr.max() > 65535:
            raise field_error("path", "a grayscale PNG of 8 or 16 bit", f"{path} (32-bit values)",
                              "read_frame")
        arr = arr.astype(np.uint16)
    return arr


def _read_tiff(path: Path) -> np.ndarray:
    import tifffile

    arr = tifffile.imread(path)
    if arr.ndim != 2:
        raise field_error("path", "a single-page grayscale TIFF (2-D); colour or multi-page "
                          "files are not converted", f"{path} (array shape {arr.shape})",
                          "read_frame")
    return arr


def read_frame(path: str | os.PathLike) -> np.ndarray:
    """Read one grayscale frame.

    Parameters
    ----------
    path : str or os.PathLike
        A ``.png`` (8 or 16 bit, via Pillow) or ``.tif``/``.tiff`` (8 or 16 bit,
        via tifffile) file.

    Returns
    -------
    numpy.ndarray
        2-D array of dtype uint8 or uint16, in ADU as stored.

    Raises
    ------
    BudgetInputError
        Naming the file: missing or unreadable, unknown extension, colour or
        multi-page image (colour is refused, not converted: the weighting of
        the channels would change the centroid), or a bit depth other than 8/16.
    """
    p = Path(path)
    ext = p.suffix.lower()
    if ext not in (".png", ".tif", ".tiff"):
        raise field_error("path", "a .png, .tif or .tiff file", str(p), "read_frame")
    try:
        arr = _read_png(p) if ext == ".png" else _read_tiff(p)
    except BudgetInputError:
        raise
    except Exception as exc:  # Pillow and tifffile raise many types for bad files
        raise field_error("path", "a readable image file", f"{p} ({type(exc).__name__}: {exc})",
                          "read_frame") from exc
    if arr.dtype not in (np.uint8, np.uint16):
        raise field_error("path", "an 8- or 16-bit unsigned grayscale image",
                          f"{p} (dtype {arr.dtype})", "read_frame")
    return arr


@dataclass(frozen=True)
class FramesResult:
    """Located target in a series of frames of a still target.

    Attributes
    ----------
    paths : tuple of str
        Frames in the order given.
    roi : tuple of int
        ``(x, y, w, h)`` in px of the full image.
    method : str
        Locator used.
    x_px, y_px : tuple of float
        Per-frame position in full-image coordinates.
    n : int
        Number of frames.
    mean_x_px, mean_y_px, sd_x_px, sd_y_px, se_x_px, se_y_px : float
        Mean, sample standard deviation (n - 1) and standard error of the mean.
    drift_x_px, drift_y_px : float
        Mean of the second half minus mean of the first half.
    drift_p_x, drift_p_y : float
        Two-sided p-values of Welch's t-test between the halves (NaN if n < 4).
    drift_verdict : str
        The drift check in words.
    """

    paths: tuple[str, ...]
    roi: tuple[int, int, int, int]
    method: str
    x_px: tuple[float, ...]
    y_px: tuple[float, ...]
    n: int
    mean_x_px: float
    mean_y_px: float
    sd_x_px: float
    sd_y_px: float
    se_x_px: float
    se_y_px: float
    drift_x_px: float
    drift_y_px: float
    drift_p_x: float
    drift_p_y: float
    drift_verdict: str

    def as_dict(self) -> dict:
        """Plain-dict summary for JSON."""
        return asdict(self)


def _check_roi(roi, shape, path) -> tuple[int, int, int, int]:
    h_img, w_img = shape
    if roi is None:
        return (0, 0, w_img, h_img)
    try:
        x, y, w, h = (int(v) for v in roi)
        exact = tuple(roi) == (x, y, w, h)
    except (TypeError, ValueError):
        exact = False
    if not exact or w < 3 or h < 3 or x < 0 or y < 0:
        raise field_error("roi", "(x, y, w, h) integers with x, y >= 0 and w, h >= 3", roi,
                          "locate_frames")
    if x + w > w_img or y + h > h_img:
        raise field_error("roi", f"inside the {w_img} x {h_img} px image {path}", roi,
                          "locate_frames")
    return (x, y, w, h)


def _check_target(crop: np.ndarray, path) -> None:
    """Refuse a frame whose peak does not clear the border noise by the margin."""
    border = np.concatenate([crop[0], crop[-1], crop[1:-1, 0], crop[1:-1, -1]])
    med = float(np.median(border))
    robust_sd = 1.4826 * float(np.median(np.abs(border - med)))
    noise = max(robust_sd, 1.0 / math.sqrt(12.0))  # at least the ADC step (JCGM 100 F.2.2.1)
    peak = float(crop.max())
    if peak - med <= DETECTION_MARGIN_SD * noise:
        raise field_error(
            "path", f"a frame whose ROI peak exceeds the border median by more than "
            f"{DETECTION_MARGIN_SD:g} robust standard deviations of the border (no target found)",
            f"{path} (peak {peak:g}, border median {med:g}, noise {noise:.3g} ADU)",
            "locate_frames")


def _drift(v: np.ndarray) -> tuple[float, float]:
    half = v.size // 2
    first, second = v[:half], v[v.size - half:]
    d = float(second.mean() - first.mean())
    if first.std() == 0 and second.std() == 0:
        return d, (1.0 if d == 0 else 0.0)
    return d, float(stats.ttest_ind(second, first, equal_var=False).pvalue)


def locate_frames(paths: Sequence[str | os.PathLike],
                  roi: tuple[int, int, int, int] | None = None, method: str = "com", *,
                  window_px: int | None = None) -> FramesResult:
    """Locate a still target in each frame and summarize the scatter.

    Parameters
    ----------
    paths : sequence of str or os.PathLike
        Frames of a still target, in acquisition order (at least 2).
    roi : (x, y, w, h), optional
        Region of interest in px (column, row of its top-left pixel, width,
        height); None uses the whole image.
    method : {"com", "gauss", "threshold"}
        Centre of mass (median-border background), least-squares Gaussian fit,
        or thresholded area centroid at half maximum.
    window_px : int, optional
        Odd window around the brightest pixel inside the ROI (None: whole ROI).

    Returns
    -------
    FramesResult
        Per-frame positions in full-image coordinates and the summary.

    Notes
    -----
    Type A evaluation (JCGM 100 4.2): mean, experimental standard deviation
    s (4.2.2) and of the mean s/sqrt(n) (4.2.3), with n - 1 degrees of freedom.
    Drift: first half against second half (the middle frame is left out for
    odd n), Welch's unequal-variance t-test (scipy.stats.ttest_ind) at the 5 %
    level; drift makes s/sqrt(n) understate the uncertainty of the mean.
    A frame is refused when its ROI peak does not exceed the median of the ROI
    border by more than ``DETECTION_MARGIN_SD`` (5) robust standard deviations
    (1.4826 MAD) of the border, floored at the ADC step 1/sqrt(12) ADU.
    """
    where = "locate_frames"
    if method not in _METHODS:
        raise field_error("method", f"one of {_METHODS}", method, where)
    if isinstance(paths, (str, os.PathLike)):
        raise field_error("paths", "a sequence of at least 2 image files", paths, where)
    paths = [str(p) for p in paths]
    if len(paths) < 2:
        raise field_error("paths", "a sequence of at least 2 image files", paths, where)
    crops, box, shape0 = [], None, None
    for p in paths:
        frame = read_frame(p)
        if shape0 is None:
            shape0 = frame.shape
            box = _check_roi(roi, shape0, p)
        elif frame.shape != shape0:
            raise field_error("path", f"a frame of the same size as the first, {shape0}",
                              f"{p} (shape {frame.shape})", where)
        x, y, w, h = box
        crop = frame[y:y + h, x:x + w].astype(float)
        _check_target(crop, p)
        crops.append(crop)
    stack = np.stack(crops)
    if method == "com":
        xs, ys = centre_of_mass(stack, window_px=window_px, background="median-border")
    elif method == "gauss":
        xs, ys = gaussian_fit(stack, window_px=window_px)
    else:
        xs, ys = threshold_centroid(stack, window_px=window_px)
    xs, ys = xs + box[0], ys + box[1]
    n = len(paths)
    sd_x, sd_y = float(np.std(xs, ddof=1)), float(np.std(ys, ddof=1))
    if n >= 4:
        (dx, px_), (dy, py_) = _drift(xs), _drift(ys)
        worst = min(px_, py_)
        if worst < 0.05:
            verdict = (f"Drift between the first and second half: {dx:+.4f} px in x "
                       f"(p = {px_:.3g}), {dy:+.4f} px in y (p = {py_:.3g}); significant at the "
                       "5 % level, so the standard error understates the uncertainty.")
        else:
            verdict = (f"No significant drift at the 5 % level: {dx:+.4f} px in x "
                       f"(p = {px_:.3g}), {dy:+.4f} px in y (p = {py_:.3g}).")
    else:
        dx = dy = px_ = py_ = float("nan")
        verdict = f"Drift not tested: {n} frames, at least 4 are needed."
    return FramesResult(
        paths=tuple(paths), roi=box, method=method,
        x_px=tuple(float(v) for v in xs), y_px=tuple(float(v) for v in ys), n=n,
        mean_x_px=float(xs.mean()), mean_y_px=float(ys.mean()), sd_x_px=sd_x, sd_y_px=sd_y,
        se_x_px=sd_x / math.sqrt(n), se_y_px=sd_y / math.sqrt(n),
        drift_x_px=dx, drift_y_px=dy, drift_p_x=px_, drift_p_y=py_, drift_verdict=verdict)


LABEL_RULE = ("a non-empty label without commas, quotes or line breaks, not starting with =, +, -, @ "
              "or a tab (a spreadsheet would run it as a formula)")


def check_position_label(label: object, field: str = "position_id") -> str:
    """A position label for the CSV: refused if it could break a row or run as a formula (CWE-1236)."""
    if not isinstance(label, str) or not label or any(c in label for c in ',"\r\n') \
            or label.startswith(("=", "+", "-", "@", "\t")):
        raise field_error(field, LABEL_RULE, label, "frames")
    return label


def frames_csv_text(result: FramesResult, *, position_id: str = "P1") -> str:
    """The per-frame positions as CSV text with columns ``position,frame,x_px,y_px``.

    Notes
    -----
    Frames are numbered from 1 in the order given; positions are written with 6 decimals
    (1e-6 px). Writing the file is the caller's job (one atomic writer:
    :func:`budget.report.safe_write.atomic_write`).
    """
    check_position_label(position_id)
    lines = [_CSV_COLUMNS]
    for k, (x, y) in enumerate(zip(result.x_px, result.y_px, strict=True), start=1):
        lines.append(f"{position_id},{k},{x:.6f},{y:.6f}")
    return "\n".join(lines) + "\n"
