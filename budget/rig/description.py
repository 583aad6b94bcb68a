"""The rig description: what the user's input file says, as plain frozen dataclasses.

Every section carries a ``source`` note (datasheet, certificate, measured,
assumed) that reaches every report. Units are in the field names.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

from budget.imaging import optics

__all__ = [
    "Camera", "Lens", "Geometry", "Target", "Pointer", "Locator", "Pivot", "Frames", "Motion",
    "VoltageSource", "Positions", "Sweep", "Data", "Reference", "MeasuredData", "RigDescription", "Assumption",
    "point_labels", "Goal", "Conformity", "RangeClaimForm",
]


@dataclass(frozen=True)
class Camera:
    pixels_x: int
    pixels_y: int
    pitch_um: float
    bit_depth: int = 12
    read_noise_e: float = 2.0
    full_well_e: float = 10000.0
    shutter: str = "global"
    row_time_us: float = 0.0
    frame_rate_hz: float = 30.0
    exposure_ms: float = 5.0
    source: str = "assumed"
    prnu_pct: float | None = None  # fixed gain pattern, % rms (None: not given, omitted from the budget)
    dsnu_e: float | None = None  # fixed dark-signal pattern, e rms per pixel (None: not given)

    @property
    def gain_e_per_adu(self) -> float:
        """Conversion gain that maps the full well onto the ADC range (common practice)."""
        return self.full_well_e / (2**self.bit_depth - 1)


@dataclass(frozen=True)
class Lens:
    focal_length_mm: float
    f_number: float = 8.0
    distortion: str = "corrected"
    residual_rms_px: float = 0.05
    residual_correlation_px: float = 0.0
    distortion_edge_pct: float = 0.0
    wavelength_nm: float = 550.0
    source: str = "assumed"


@dataclass(frozen=True)
class Geometry:
    working_distance_mm: float
    pointer_radius_mm: float
    pivot_offset_x_mm: float = 0.0
    pivot_offset_y_mm: float = 0.0
    zero_direction_deg: float = 90.0
    travel: str = "counterclockwise"
    target_height_mm: float = 0.0
    target_height_u_mm: float = 0.0
    tilt_bound_deg: float | None = None
    tilt_deg: float | None = None
    tilt_u_deg: float | None = None
    tilt_azimuth_deg: float | None = None
    remounted: bool = False
    roll_bound_deg: float = 0.0
    source: str = "assumed"
    mount_shift_um: float | None = None  # camera-mount drift between the zero image and the readings, bound
    mount_roll_deg: float | None = None  # per axis at the dial (µm) and as a roll (deg); None: not given


@dataclass(frozen=True)
class Target:
    shape: str = "spot"
    sigma_px: float | None = None
    diameter_mm: float = 0.0
    signal_e: float = 50000.0
    background_e: float = 10.0
    source: str = "assumed"


@dataclass(frozen=True)
class Pointer:
    """The pointer under test (``[pointer]``): its repeatability and settling, and the play of its pivot.

    None: not given, and the budget has no term for it (each is listed as an optimistic omission).
    """

    repeatability_deg: float | None = None  # sd of the rest angle from one approach to the next
    settling_deg: float | None = None  # bound of what the pointer still moves after the image is taken
    pivot_play_mm: float | None = None  # bound per axis of the shaft's runout / bearing play at the pivot
    source: str = "assumed"


@dataclass(frozen=True)
class Locator:
    method: str = "centroid"
    window_px: int = 9
    window_at: str = "brightest"
    source: str = "assumed"


@dataclass(frozen=True)
class Pivot:
    method: str = "readings"
    arc_half_angle_deg: float = 45.0
    arc_points: int = 9
    arc_centre_deg: float | None = None
    mark_offset_bound_mm: float = 0.0
    source: str = "assumed"


@dataclass(frozen=True)
class Frames:
    per_reading: int = 1
    averaged: str = "positions"
    source: str = "assumed"


@dataclass(frozen=True)
class Motion:
    state: str = "static"
    rate_deg_per_s: float = 0.0
    timestamp: str = "middle"
    jitter_ms: float = 0.0
    source: str = "assumed"


@dataclass(frozen=True)
class VoltageSource:
    span_v: float = 20.0
    polarity: str = "bipolar"
    bits: int = 16
    gain_error_pct: float = 0.0
    offset_mv: float = 0.0
    inl_lsb: float = 0.0
    noise_uv: float = 0.0
    output_impedance_ohm: float = 0.0
    load_resistance_ohm: float | None = None
    readback: str = "commanded"
    dmm_pct_reading: float = 0.0
    dmm_counts: float = 0.0
    dmm_resolution_v: float = 1e-4
    source: str = "assumed"

    @property
    def lsb_v(self) -> float:
        """One step of the source's DAC, V."""
        return self.span_v / 2**self.bits

    @property
    def range_v(self) -> tuple[float, float]:
        """The voltages the source can command: ±span/2 (bipolar) or [0, span] (unipolar)."""
        if self.polarity == "bipolar":
            return -self.span_v / 2, self.span_v / 2
        return 0.0, self.span_v


@dataclass(frozen=True)
class Positions:
    angles_deg: tuple[float, ...]


@dataclass(frozen=True)
class Sweep:
    set_points_v: tuple[float, ...]
    nominal_gain_deg_per_v: float


@dataclass(frozen=True)
class Data:
    """Where the measured positions are (``[data]``) and how far a reading may be from its nominal."""

    readings_csv: str | None = None
    pivot_csv: str | None = None
    angle_tolerance_deg: float = 10.0


@dataclass(frozen=True)
class Reference:
    """Reference angles of the readings (a rotary table, a calibrated dial) with their expanded uncertainty."""

    angles_deg: tuple[float, ...]
    U_deg: tuple[float, ...]
    source: str = "assumed"


@dataclass(frozen=True, eq=False)
class MeasuredData:
    """Located positions read from the data files, in image coordinates (x right, y down, px).

    ``points`` maps a point label to its frames' positions in acquisition order, shape (n, 2);
    ``images`` gives each frame's image file as recorded ("" when the data file names none);
    ``files`` lists every file the data rest on as (path, SHA-256, kind, note), kind "data" or
    "image"; the note says when an image was not found and its recorded SHA-256 is shown.
    """

    points: dict
    images: dict
    files: tuple[tuple[str, str, str, str], ...]


@dataclass(frozen=True)
class Goal:
    """Targets for the expanded uncertainties (``[goal]``); ``p`` None: the run's coverage probability."""

    angle_U_deg: float | None = None
    gain_U_pct: float | None = None
    gain_U_deg_per_v: float | None = None
    p: float | None = None
    source: str = "assumed"


@dataclass(frozen=True)
class Conformity:
    """Tolerances and the decision rule for conformity decisions (``[conformity]``, JCGM 106)."""

    rule: str = "simple"  # "simple" acceptance or "guarded" acceptance (guard band w = U)
    angle_tolerance_deg: float | None = None
    gain_tolerance_pct: float | None = None
    source: str = "assumed"


@dataclass(frozen=True)
class RangeClaimForm:
    """How the claim across the range is stated (``[range_claim]``): ``linear`` a + b·|θ| or ``table``."""

    form: str = "linear"
    source: str = "assumed"


@dataclass(frozen=True)
class Assumption:
    """A value the tool supplied because the file left the field out, and why it is fair."""

    field: str  # "section.key", as in the rig file
    value: object
    reason: str


@dataclass(frozen=True)
class RigDescription:
    """A whole rig: one instance per input file."""

    title: str
    camera: Camera
    lens: Lens
    geometry: Geometry
    target: Target
    locator: Locator
    pivot: Pivot
    frames: Frames
    motion: Motion
    source: VoltageSource | None
    positions: Positions | None
    sweep: Sweep | None
    data: Data | None = None
    reference: Reference | None = None
    raw: dict = field(default_factory=dict, compare=False, repr=False)
    assumptions: tuple[Assumption, ...] = ()
    goal: Goal | None = None
    conformity: Conformity | None = None
    range_claim: RangeClaimForm | None = None
    pointer: Pointer = field(default_factory=Pointer)
    input_warnings: tuple[str, ...] = ()
    """Numbers outside their plausible range, with the likely unit slip (:mod:`budget.inputs.supplied`)."""

    def assumed(self, name: str) -> bool:
        """Whether the value of ``name`` ("section.key") was supplied by the tool, not the file."""
        return any(a.field == name for a in self.assumptions)

    # ---- derived optics (pinhole with a thin lens focused at the working distance)
    @property
    def magnification(self) -> float:
        """m = f/(D − f) (thin lens, :func:`budget.imaging.optics.magnification`)."""
        return float(optics.magnification(self.lens.focal_length_mm, self.geometry.working_distance_mm))

    @cached_property
    def focal_px(self) -> float:
        """Image distance in pixels: the pinhole constant of the projection."""
        d_i = optics.image_distance_mm(self.lens.focal_length_mm, self.geometry.working_distance_mm)
        return float(d_i) / (self.camera.pitch_um * 1e-3)

    @property
    def radius_px(self) -> float:
        """Pointer radius in pixels: R over the pixel's size on the dial."""
        return self.geometry.pointer_radius_mm / float(optics.object_pixel_mm(self.camera.pitch_um,
                                                                              self.magnification))

    @cached_property
    def nominal_angles_deg(self) -> tuple[float, ...]:
        """Angles of the readings relative to the zero image (formed once: the rig model reads them in
        every call)."""
        if self.sweep is not None:
            k = self.sweep.nominal_gain_deg_per_v
            return tuple(k * v for v in self.sweep.set_points_v)
        assert self.positions is not None
        return self.positions.angles_deg


def point_labels(rig: RigDescription) -> tuple[str, ...]:
    """Labels of every located point: the zero image, the readings, then pivot points."""
    labels = ["Z", *(f"P{i + 1}" for i in range(len(rig.nominal_angles_deg)))]
    if rig.pivot.method == "arc":
        labels += [f"C{i + 1}" for i in range(rig.pivot.arc_points)]
    elif rig.pivot.method == "mark":
        labels.append("M")
    return tuple(labels)
