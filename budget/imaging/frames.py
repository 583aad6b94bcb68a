"""Real frames of a still target: read, find, locate, summarize (Type A).

Image coordinates, as image files store pixels: x to the right along a row, y down along a column,
in px; the centre of pixel ``(i, j)`` (row i, column j) is at ``x = j``, ``y = i``, so the origin is
the centre of the top-left pixel (as in :mod:`budget.imaging.locate` and the whole package).
Many positions at once, their CSV and the files' SHA-256: :mod:`budget.imaging.frame_sets`.
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from dataclasses import asdict, dataclass
from pathlib import Path

import numpy as np
from scipy import ndimage

from budget.errors import BudgetInputError, field_error
from budget.imaging.locate import centre_of_mass, gaussian_fit, threshold_centroid
from budget.propagation.type_a import MIN_OBSERVATIONS, type_a_series

__all__ = ["FramesResult", "check_position_label", "find_target_roi", "locate_frames", "read_frame"]

_METHODS = ("com", "gauss", "threshold")
#: A target must stand this many robust standard deviations above the ROI border.
DETECTION_MARGIN_SD = 5.0


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
        Drift over the series: least-squares slope against the frame index times (n − 1).
    drift_p_x, drift_p_y : float
        Two-sided p-values of the slopes (t test, n − 2 dof; NaN if n < 4).
    drift_verdict : str
        The drift and autocorrelation checks in words.
    n_eff : float
        Effective number of independent frames (n unless successive frames are correlated).
    lag1 : float
        Largest lag-1 autocorrelation of the two axes (NaN if n < 4).
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
    n_eff: float = math.nan
    lag1: float = math.nan
    image_kind: str = ""

    def as_dict(self) -> dict:
        """Plain-dict summary for JSON."""
        return asdict(self)


def _kind(frame: np.ndarray) -> str:
    return f"{frame.shape[1]} x {frame.shape[0]} px, {8 * frame.dtype.itemsize}-bit"


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


def find_target_roi(stack: np.ndarray, window_px: int, where: str = "frames") -> tuple[int, int, int, int]:
    """A ``window_px`` square ROI centred on the brightest compact spot of a stack of frames.

    Notes
    -----
    The frames' mean is smoothed by a 3 × 3 box (scipy.ndimage.uniform_filter) before its
    maximum is taken, so a single hot pixel (diluted ninefold) loses against a spot spread over a
    few pixels (common practice). The window is fixed for every frame of the position, so the
    locator never changes its pixels from frame to frame.
    """
    if not (isinstance(window_px, int) and window_px >= 3 and window_px % 2 == 1):
        raise field_error("window_px", "an odd integer >= 3", window_px, where)
    mean = ndimage.uniform_filter(np.asarray(stack, dtype=float).mean(axis=0), size=3, mode="nearest")
    i, j = np.unravel_index(int(np.argmax(mean)), mean.shape)
    h = window_px // 2
    x, y = int(j) - h, int(i) - h
    if x < 0 or y < 0 or x + window_px > mean.shape[1] or y + window_px > mean.shape[0]:
        raise field_error("window_px", f"a window that fits in the image around the target found at x = {j}, y = {i} "
                          f"(image {mean.shape[1]} x {mean.shape[0]} px)", window_px, where)
    return x, y, window_px, window_px


def _series_verdict(xs: np.ndarray, ys: np.ndarray):
    """Drift and autocorrelation of the located positions (:func:`budget.propagation.type_a.type_a_series`)."""
    n = xs.size
    if n < MIN_OBSERVATIONS:
        nan = float("nan")
        return nan, nan, nan, nan, f"Drift not tested: {n} frames, at least {MIN_OBSERVATIONS} are needed.", nan, nan
    s = type_a_series(np.column_stack([xs, ys]))
    dx, dy = (float(v) for v in s.drift_total)
    px_, py_ = s.slope_p
    if s.drifting:
        verdict = (f"Drift over the frames: {dx:+.4f} px in x (p = {px_:.3g}), {dy:+.4f} px in y (p = {py_:.3g}); "
                   "significant at the 5 % level, so the standard error understates the uncertainty.")
    else:
        verdict = (f"No significant drift at the 5 % level: {dx:+.4f} px in x (p = {px_:.3g}), "
                   f"{dy:+.4f} px in y (p = {py_:.3g}).")
    if s.autocorrelated:
        verdict += (f" Successive frames are correlated (lag-1 {max(s.lag1):.2f}): they amount to "
                    f"n_eff = {s.n_eff:.1f} independent frames (Zhang 2006).")
    return dx, dy, px_, py_, verdict, s.n_eff, float(max(s.lag1))


def locate_frames(paths: Sequence[str | os.PathLike],
                  roi: tuple[int, int, int, int] | str | None = None, method: str = "com", *,
                  window_px: int | None = None) -> FramesResult:
    """Locate a still target in each frame and summarize the scatter.

    Parameters
    ----------
    paths : sequence of str or os.PathLike
        Frames of a still target, in acquisition order (at least 2).
    roi : (x, y, w, h), "auto" or None
        Region of interest in px (column, row of its top-left pixel, width, height); "auto"
        centres a ``window_px`` square on the brightest compact spot (:func:`find_target_roi`);
        None uses the whole image.
    method : {"com", "gauss", "threshold"}
        Centre of mass (median-border background), least-squares Gaussian fit,
        or thresholded area centroid at half maximum.
    window_px : int, optional
        With a given ROI: odd window around the brightest pixel inside it (None: whole ROI).
        With ``roi="auto"``: the side of the fixed window (required).

    Returns
    -------
    FramesResult
        Per-frame positions in full-image coordinates and the summary.

    Raises
    ------
    BudgetInputError
        A frame that cannot be read, frames of mixed size or bit depth, an ROI outside the
        image, a frame without a target clear of the noise; each names the file.

    Notes
    -----
    Type A evaluation (JCGM 100 4.2): mean, experimental standard deviation
    s (4.2.2) and of the mean s/sqrt(n) (4.2.3), with n - 1 degrees of freedom.
    Drift and correlation between frames: :func:`budget.propagation.type_a.type_a_series`
    (slope t test, lag-1 autocorrelation; 4 frames or more), the same checks ``run`` makes;
    drift makes s/sqrt(n) understate the uncertainty of the mean.
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
    frames = []
    for p in paths:
        frame = read_frame(p)
        if frames and (frame.shape != frames[0].shape or frame.dtype != frames[0].dtype):
            raise field_error("path", f"a frame like the first ({_kind(frames[0])}): frames of mixed size or bit "
                              "depth are not one camera setting", f"{p} ({_kind(frame)})", where)
        frames.append(frame)
    if roi == "auto":
        total = np.zeros(frames[0].shape)
        for f in frames:
            total += f
        box, window_px = find_target_roi(total[None], window_px, where), None
    else:
        box = _check_roi(roi, frames[0].shape, paths[0])
    crops = []
    for p, frame in zip(paths, frames, strict=True):
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
    dx, dy, px_, py_, verdict, n_eff, lag1 = _series_verdict(xs, ys)
    return FramesResult(
        paths=tuple(paths), roi=box, method=method,
        x_px=tuple(float(v) for v in xs), y_px=tuple(float(v) for v in ys), n=n,
        mean_x_px=float(xs.mean()), mean_y_px=float(ys.mean()), sd_x_px=sd_x, sd_y_px=sd_y,
        se_x_px=sd_x / math.sqrt(n), se_y_px=sd_y / math.sqrt(n),
        drift_x_px=dx, drift_y_px=dy, drift_p_x=px_, drift_p_y=py_, drift_verdict=verdict,
        n_eff=n_eff, lag1=lag1, image_kind=_kind(frames[0]))


LABEL_RULE = ("a non-empty label without commas, quotes or line breaks, not starting with =, +, -, @ "
              "or a tab (a spreadsheet would run it as a formula)")


def check_position_label(label: object, field: str = "position_id") -> str:
    """A position label for the CSV: refused if it could break a row or run as a formula (CWE-1236)."""
    if not isinstance(label, str) or not label or any(c in label for c in ',"\r\n') \
            or label.startswith(("=", "+", "-", "@", "\t")):
        raise field_error(field, LABEL_RULE, label, "frames")
    return label
