"""The plant file (TOML): site, where the exports are, data rules, margin policy, window.

Validated on load with pydantic; any error names the file, the table and key, and what would be
valid. Quantities are written with their unit ("120 m", "5 min") and converted to SI here. The
pump register and the NPSH3 curves are tables of their own (see :mod:`screening.inputs.register`).
"""

from __future__ import annotations

import math
import tomllib
import zoneinfo
from pathlib import Path
from typing import Literal

from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    ValidationError,
    field_validator,
    model_validator,
)

from screening.inputs.tagdata import status_words
from screening.inputs.units import UnitError, parse_duration, parse_quantity, parse_unit


class ConfigError(ValueError):
    """A config file that cannot be used; the message names file, place and what is valid."""


class _Strict(BaseModel):
    # inf and nan are valid TOML floats but no valid setting
    model_config = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False)


#: Longest duration a setting may give [s]: a hold or an allowance beyond a year is a typo.
MAX_DURATION = 366 * 86400.0


def _finite(value, kind: str) -> float:
    """A quantity of ``kind`` with its unit, in SI; a unit pint refuses or a non-finite number
    is a validation error."""
    try:
        number = parse_quantity(value, kind, None)
    except UnitError as exc:
        raise ValueError(str(exc)) from exc
    if not math.isfinite(number):
        raise ValueError(f"{value!r} is not a finite {kind}")
    return number


def _length(value) -> float:
    return _finite(value, "length")


def _pressure(value) -> float:
    return _finite(value, "pressure")


def _duration(value) -> float:
    try:
        seconds = parse_duration(value)
    except UnitError as exc:
        raise ValueError(str(exc)) from exc
    if not 0 <= seconds <= MAX_DURATION:  # also false for nan
        raise ValueError(f"{value!r} is not a duration from 0 to 366 days (such as '5 min')")
    return seconds


class Site(_Strict):
    """Where the plant is: its name, elevation [m], time zone and optional barometer."""

    name: str
    elevation: float = Field(description="site elevation above sea level [m]")
    timezone: str
    barometer_tag: str | None = None
    barometer_unit: str | None = None
    barometer_stale_limit: float = Field(1800.0, description="hold of a barometer sample [s]")
    #: Largest difference from the 1976 standard atmosphere at the site elevation [Pa] for
    #: which a barometer sample is used: weather moves station pressure by a few kPa (a deep
    #: low about 4-5 kPa below the mean, common practice), while a sea-level-corrected reading
    #: at a site 1500 m up is about 17 kPa above the station pressure.
    barometer_tolerance: float = Field(5000.0, description="[Pa]")

    _elev = field_validator("elevation", mode="before")(lambda v: _length(v))
    _baro_tol = field_validator("barometer_tolerance", mode="before")(lambda v: _pressure(v))

    @field_validator("barometer_tolerance")
    @classmethod
    def _tolerance_range(cls, v: float) -> float:
        if not 0 < v <= 20_000.0:
            raise ValueError(
                f"barometer_tolerance {v:g} Pa is not between 0 and 20 kPa (such as '5 kPa')"
            )
        return v

    @field_validator("elevation")
    @classmethod
    def _elevation_range(cls, v: float) -> float:
        if not -1000.0 <= v <= 10_000.0:
            raise ValueError(
                f"site elevation {v:g} m is not between -1000 m and 10000 m above sea level"
            )
        return v

    _baro_stale = field_validator("barometer_stale_limit", mode="before")(lambda v: _duration(v))

    @field_validator("timezone")
    @classmethod
    def _tz(cls, v: str) -> str:
        try:
            zoneinfo.ZoneInfo(v)
        # OSError: a name too long for a file name in the time-zone database
        except (zoneinfo.ZoneInfoNotFoundError, ValueError, OSError) as exc:
            raise ValueError(
                f"time zone {v!r} is not an IANA name (for example 'Europe/Berlin', 'UTC', "
                "'America/Chicago')"
            ) from exc
        return v

    @field_validator("barometer_unit")
    @classmethod
    def _baro_unit(cls, v):
        if v is not None:
            try:
                parse_unit(v, "pressure")
            except UnitError as exc:
                raise ValueError(str(exc)) from exc
        return v


class RegisterFiles(_Strict):
    """Paths (relative to the plant file) of the pump register, the NPSH3 curves and, optionally,
    the table of known events (maintenance, failures; :mod:`screening.inputs.events`)."""

    pumps: str
    curves: str
    events: str | None = None


class DataRules(_Strict):
    """How samples are held and judged: stale limit [s], frozen-value limit [s], quality."""

    stale_limit: float = 300.0
    frozen_after: float | None = 6 * 3600.0
    good_quality: tuple[str, ...] = ("good",)
    #: Share of the window a pump's data must cover (not no data, not bad data) for its hours
    #: to be ranked; below it the pump is listed as "not enough data to screen" [-].
    min_coverage: float = Field(0.9, ge=0.0, le=1.0)
    #: Longest interval between two stored points of a compressed ("recorded values") export
    #: [s]: the historian's maximum archive interval. Between two points closer than this the
    #: value is a straight line; a point with no successor within it stands for at most this
    #: long, and the rest of the gap is no data. 8 h is a common setting; the historian's own
    #: setting governs. Per export family in ``[[exports]] max_interval``.
    max_interval: float = 8 * 3600.0
    #: Samples per tag above which a pump's window is screened in time chunks of whole local
    #: days (one-second data: a pump-year in chunks of about this many samples per tag), with
    #: the same tables as in one piece; 0 screens every pump in one piece. Only for pumps whose
    #: tags are all in time-zone-aware Parquet files (see docs/scale.md).
    chunk_samples: int = Field(500_000, ge=0)

    _dur = field_validator("stale_limit", "frozen_after", "max_interval", mode="before")(
        lambda v: None if v in (None, "", "none", "off") else _duration(v)
    )

    @field_validator("stale_limit", "max_interval")
    @classmethod
    def _positive(cls, v: float, info) -> float:
        if v is None or v <= 0:
            raise ValueError(f"{info.field_name} must be a positive duration such as '5 min'")
        return v


class Running(_Strict):
    """Running detection without a run tag (fractions of BEP flow and rated speed) and the
    speed range inside which NPSH3 is scaled without a warning."""

    min_flow_fraction: float = Field(0.05, ge=0, le=1)
    min_speed_fraction: float = Field(0.2, ge=0, le=1)
    #: Speed ratios n/n_rated inside which the affinity scaling of NPSH3 is trusted; running
    #: hours outside are counted and shown (ISO 9906 converts test results only within about
    #: 80-120 % of the test speed, from memory).
    speed_scaling_range: tuple[float, float] = (0.8, 1.2)
    #: Words of run-status tags besides the defaults (on/off, run/stop, running/stopped,
    #: true/false, yes/no, 1/0; any case): e.g. on_words = ["in service"].
    on_words: tuple[str, ...] = ()
    off_words: tuple[str, ...] = ()

    @model_validator(mode="after")
    def _words_apart(self) -> Running:
        status_words(self.on_words, self.off_words)  # one rule, the readers' own
        return self

    #: Plant-wide minimum stable flow as a fraction of BEP flow [-] for pumps whose register
    #: gives neither a minimum stable nor a thermal minimum flow. None by default: such pumps
    #: are flagged "minimum flow not registered" (vendors state 25-40 % of BEP typically,
    #: common practice; the vendor's figure governs).
    min_stable_flow_fraction: float | None = Field(None, gt=0, lt=1)
    #: Time after each start (stopped to running) counted as "starting" [s]: left out of the
    #: margin bands, the operating regions and the required setpoints. 0: none.
    settle_after_start: float = 0.0

    _settle = field_validator("settle_after_start", mode="before")(lambda v: _duration(v))

    @field_validator("speed_scaling_range")
    @classmethod
    def _ordered(cls, v: tuple[float, float]) -> tuple[float, float]:
        if not 0 < v[0] < v[1]:
            raise ValueError(f"{list(v)} is not [low, high] with 0 < low < high, e.g. [0.8, 1.2]")
        return v


class Window(_Strict):
    """Default screening window (dates in the site time zone; end exclusive)."""

    start: str | None = None
    end: str | None = None


class Onset(_Strict):
    """Settings of the onset investigation (``pumpscreen onset``); the command line overrides.

    Episodes below the guidance start where NPSHa falls below ``enter_below`` times the
    guidance head and end where it rises above ``leave_above`` times it (hysteresis); stretches
    with less than ``min_hours`` below are dropped and gaps shorter than ``bridge_hours``
    bridged. The baseline is the first ``baseline_days`` of the window (at most a quarter).
    """

    enter_below: float = Field(1.0, gt=0, description="[-] of the guidance head")
    leave_above: float = Field(1.05, gt=0, description="[-] of the guidance head")
    min_hours: float = Field(0.5, ge=0, description="[h]")
    bridge_hours: float = Field(1.0, ge=0, description="[h]")
    baseline_days: float = Field(21.0, gt=0, description="[days]")
    #: Smallest change worth calling an onset: of the flow-normalised margin [m] and of the
    #: daily hours below guidance [h/day]. A choice of ours, not a standard: a daily median
    #: of hundreds of samples shows millimetres, which no one should act on.
    min_margin_change: float = Field(0.3, ge=0, description="[m]")
    min_exposure_change: float = Field(0.5, ge=0, description="[h/day]")

    @model_validator(mode="after")
    def _hysteresis(self) -> Onset:
        if not self.leave_above > self.enter_below:
            raise ValueError(
                f"leave_above ({self.leave_above}) must be greater than enter_below "
                f"({self.enter_below})"
            )
        return self


class ExportSource(_Strict):
    """One family of historian export files and how they are laid out.

    ``layout = "dataset"`` is a folder written by ``pumpscreen ingest`` (see
    :mod:`screening.inputs.dataset`), given by ``path``; it takes no other key.
    """

    files: str | None = Field(None, description="glob relative to the plant file")
    layout: Literal["wide", "long", "dataset"]
    path: str | None = Field(None, description="dataset folder relative to the plant file")
    format: Literal["csv", "parquet"] | None = None
    time_column: str = "timestamp"
    tag_column: str = "tag"
    value_column: str = "value"
    quality_column: str | None = None
    delimiter: str = ","
    decimal: str = "."
    encoding: str = "utf-8"
    #: Order of day and month in dates such as 03/04/2026 (see the README, "Dates"): read only
    #: when declared, never guessed.
    date_order: Literal["day_first", "month_first"] | None = None
    max_csv_mb: float = Field(
        2000.0, gt=0, le=1e7, description="largest CSV file read [MB, uncompressed]"
    )
    #: How the values between two samples are drawn: "step" (a sample holds up to the stale
    #: limit: sampled exports) or "linear" (straight lines between stored points, up to
    #: ``max_interval``: compressed "recorded values" exports). Run-status tags are steps.
    reconstruction: Literal["step", "linear"] = "step"
    #: Longest interval between stored points of this family [s]; None: ``[data]``'s.
    max_interval: float | None = None

    @field_validator("max_interval", mode="before")
    @classmethod
    def _interval(cls, v):
        if v is None:
            return None
        seconds = _duration(v)
        if seconds <= 0:
            raise ValueError("max_interval must be a positive duration such as '8 h'")
        return seconds

    @model_validator(mode="after")
    def _keys_of_layout(self) -> ExportSource:
        if self.layout == "dataset":
            if not self.path:
                raise ValueError(
                    "layout 'dataset' needs 'path': the folder written by 'pumpscreen ingest'"
                )
            other = sorted(
                self.model_fields_set - {"layout", "path", "reconstruction", "max_interval"}
            )
            if other:
                raise ValueError(
                    f"key(s) {', '.join(other)} do not apply to layout 'dataset' (it takes "
                    "only 'path', 'reconstruction' and 'max_interval'; the dataset's manifest "
                    "describes its columns)"
                )
        else:
            if self.path is not None:
                raise ValueError(
                    f"key 'path' applies only to layout 'dataset'; {self.layout} files are "
                    "found by 'files' (a glob)"
                )
            if not self.files:
                raise ValueError(
                    f"layout {self.layout!r} needs 'files' (a glob relative to the plant file)"
                )
        return self


class PolicyRule(_Strict):
    """Minimum margin for an application class, a suction-specific-speed range (US units) and
    optionally a suction-energy class.

    Guidance head = max(ratio · NPSH3, NPSH3 + margin): "ratio or margin, whichever is
    greater" (ANSI/HI 9.6.1-2012, as summarised in secondary sources). A rule with
    ``suction_energy`` applies only to pumps whose suction energy is known (impeller eye
    diameter in the register) and of that class (ANSI/HI 9.6.1-1998 method, from memory).
    """

    application: str
    min_suction_specific_speed: float | None = None
    max_suction_specific_speed: float | None = None
    suction_energy: Literal["low", "high", "very_high"] | None = None
    ratio: float = Field(gt=0)
    margin: float = Field(description="margin above NPSH3 [m]")

    _m = field_validator("margin", mode="before")(lambda v: _length(v))

    @model_validator(mode="after")
    def _can_be_missed(self) -> PolicyRule:
        # guidance = max(ratio·NPSH3, NPSH3 + margin) equals NPSH3 when ratio <= 1 and
        # margin <= 0: no NPSHa could then be above NPSH3 and below the guidance
        if self.ratio <= 1.0 and self.margin <= 0.0:
            raise ValueError(
                f"ratio {self.ratio:g} with margin {self.margin:g} m makes the guidance equal "
                "NPSH3, so 'below guidance' could never be counted; give a ratio above 1 or a "
                'margin above 0 m (e.g. ratio = 1.1, margin = "0.6 m")'
            )
        if self.margin < 0.0:
            raise ValueError(f"margin {self.margin:g} m is negative: a margin is above NPSH3")
        return self

    def matches(self, application: str, s: float, energy_class: str = "unknown") -> bool:
        """True when this rule applies to ``application`` at suction specific speed ``s`` [-]
        and suction-energy class ``energy_class`` ("unknown" when no eye diameter)."""
        if application != self.application:
            return False
        if self.min_suction_specific_speed is not None and s < self.min_suction_specific_speed:
            return False
        if self.max_suction_specific_speed is not None and s >= self.max_suction_specific_speed:
            return False
        if self.suction_energy is not None and self.suction_energy != energy_class:
            return False
        return True


class SuctionEnergyLimits(_Strict):
    """Where high suction energy begins [US units: in·rpm·S·SG], for single-suction (end
    suction) and double-suction impellers, and the factor from high to very high. Defaults
    from ANSI/HI 9.6.1-1998 as summarised in secondary sources (from memory, medium
    confidence): check against the standard your purchase specified."""

    end_suction_high: float = Field(160e6, gt=0)
    double_suction_high: float = Field(120e6, gt=0)
    very_high_factor: float = Field(1.5, gt=1)


class Policy(_Strict):
    """The margin policy: guidance rules, suction-energy limits and the ratio from which
    margin is called ample."""

    ample_ratio: float = Field(2.0, gt=1)
    suction_energy: SuctionEnergyLimits = SuctionEnergyLimits()
    rules: tuple[PolicyRule, ...] = Field(min_length=1)


class PlantFile(_Strict):
    """The whole plant file."""

    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=True)

    site: Site
    register_files: RegisterFiles = Field(alias="register")
    data: DataRules = DataRules()
    running: Running = Running()
    window: Window = Window()
    onset: Onset = Onset()
    exports: tuple[ExportSource, ...] = Field(min_length=1)
    policy: Policy


def _location(loc: tuple) -> str:
    parts = []
    for item in loc:
        if isinstance(item, int):
            parts[-1] = f"{parts[-1]}[{item + 1}]" if parts else f"[{item + 1}]"
        else:
            parts.append(str(item))
    return ".".join(parts)


def read_toml(path: Path, what: str) -> dict:
    """The TOML table of a file, or a ConfigError naming the file (and the line where the
    bytes are not UTF-8); ``what`` names the file in messages ("plant file")."""
    try:
        text = path.read_text(encoding="utf-8-sig")
    except FileNotFoundError as exc:
        raise ConfigError(f"{path}: {what} not found") from exc
    except UnicodeDecodeError as exc:
        data = path.read_bytes()
        line = data[: exc.start].count(b"\n") + 1
        raise ConfigError(
            f"{path} line {line}: not UTF-8 text (byte 0x{data[exc.start]:02x}; a Latin-1 "
            f"character such as '°'?); save the {what} as UTF-8"
        ) from exc
    except OSError as exc:
        raise ConfigError(f"{path}: cannot be read ({exc})") from exc
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{path}: not valid TOML: {exc}") from exc
    except RecursionError as exc:
        raise ConfigError(f"{path}: not valid TOML: arrays or tables nested too deeply") from exc


def read_plant_file(path: str | Path) -> tuple[PlantFile, Path]:
    """Read and validate a plant file.

    Parameters
    ----------
    path : str or Path
        The TOML file.

    Returns
    -------
    (PlantFile, Path)
        The validated settings (SI units) and the folder that relative paths start from.

    Raises
    ------
    ConfigError
        Naming the file, the key and what would be valid.
    """
    path = Path(path)
    raw = read_toml(path, "plant file")
    try:
        plant = PlantFile.model_validate(raw)
    except ValidationError as exc:
        raise validation_error(path, exc, "the configuration reference") from None
    return plant, path.parent


def validation_error(path: Path, exc: ValidationError, reference: str) -> ConfigError:
    """One clear error from pydantic's: a line per problem naming the file and the key."""
    lines: list[str] = []
    for err in exc.errors():
        where = _location(err["loc"]) or "(top level)"
        msg = err["msg"].removeprefix("Value error, ")
        if err["type"] == "extra_forbidden":
            msg = f"unknown key (check its spelling; see {reference})"
        if err["type"] == "too_short" and any(
            line.startswith(f"{path}: [{where}") for line in lines
        ):
            continue  # the item's own error says more than "too few items"
        lines.append(f"{path}: [{where}] {msg}")
    return ConfigError("\n".join(lines))
