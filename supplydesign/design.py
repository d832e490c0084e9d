"""The validated design: plain dataclasses holding SI floats.

A *design* fixes every part; a *brief* is the same structure with some choices
left open (see shared file contract, "One file for briefs and designs"). Open
choices are marked by ``None`` values together with the ``open`` flags below, so
one set of types serves both; :func:`Design.is_complete` tells them apart.

Units: V, A, ohm, F, H, Hz, W, s, m; fractions (0.1 for 10 %); temperatures in
degrees Celsius (``_c``), a part's life in hours (``_h``), apparent power in VA.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

WINDINGS = ("center-tapped", "single")
RECTIFIER_KINDS = ("valve", "silicon")
ARRANGEMENTS = ("full-wave", "bridge", "half-wave")
LINK_KINDS = ("wire", "resistor", "choke", "choose")
#: how a part's value is spread within its tolerance among many builds
DISTRIBUTIONS = ("uniform", "normal")

# Defaults of a generic 1 kV, 1 A silicon diode (shared file contract).
SILICON_SATURATION_A = 5e-9
SILICON_EMISSION = 1.8
SILICON_SERIES_OHM = 0.05

#: what a transformer's DC current rating assumes of the load ([transformer] rated_for)
RATING_LOADS = ("capacitor input", "choke input")
#: ambient temperature inside the chassis where the file states none [degC]
DEFAULT_AMBIENT_C = 40.0
#: hours of use per day where the file states none, as a share of the day
DEFAULT_USE = 4.0 / 24.0


@dataclass(frozen=True)
class Chassis:
    """Where the parts live: the air around them and how long the amplifier is on.

    None means "not stated": the defaults above apply and reports say so.
    """

    ambient_c: float | None = None  # air around the parts [degC]
    use: float | None = None  # share of the day the amplifier is on (4 h/day = 1/6)
    min_life_h: float | None = None  # briefs: least estimated life of every electrolytic [h]

    @property
    def ambient(self) -> float:
        return DEFAULT_AMBIENT_C if self.ambient_c is None else self.ambient_c

    @property
    def use_share(self) -> float:
        return DEFAULT_USE if self.use is None else self.use


@dataclass(frozen=True)
class Tolerance:
    """A band around a nominal value, as fractions: from nominal·(1 − low) to
    nominal·(1 + high). "20 %" is Tolerance(0.2, 0.2); "-10 % +50 %" (an electrolytic
    as often sold) is Tolerance(0.1, 0.5)."""

    low: float
    high: float

    @property
    def symmetric(self) -> bool:
        return self.low == self.high


@dataclass(frozen=True)
class Mains:
    frequency_hz: float = 50.0
    low: float = 0.10  # fraction below nominal at the low limit
    high: float = 0.10  # fraction above nominal at the high limit
    distribution: str = "uniform"  # of the mains across its band among many builds


@dataclass(frozen=True)
class Transformer:
    winding: str = "center-tapped"
    open_circuit_v: float | None = None  # rms, no load, nominal mains; per half if center-tapped
    resistance_ohm: float | None = None  # total source resistance per half (or whole winding)
    leakage_h: float = 0.0  # series leakage inductance per half
    rated_current_a: float | None = None  # DC load current rating
    # spread among builds (None: from the catalog, else a stated default)
    tolerance: Tolerance | None = None  # of the open-circuit voltage
    resistance_tolerance: Tolerance | None = None
    distribution: str = "uniform"
    rated_for: str | None = None  # load the DC rating assumes (RATING_LOADS); None: capacitor
    rated_rms_a: float | None = None  # rms current rating per half (whole winding if single)
    rated_va: float | None = None  # apparent power rating of the whole HT winding [VA]
    primary_v: float | None = None  # mains voltage the primary is wound for (nominal)
    other_load_va: float | None = None  # other windings' load (heaters, bias) [VA]
    part: str | None = None  # catalog id, when taken from a catalog
    choose: tuple[str, ...] = ()  # brief: catalog ids to choose among
    price: float | None = None
    currency: str | None = None


@dataclass(frozen=True)
class Rectifier:
    kind: str = "silicon"
    arrangement: str = "full-wave"
    # valve (Child-Langmuir, one point)
    drop_v: float | None = None
    drop_current_a: float | None = None
    # silicon (Shockley with series resistance)
    saturation_current_a: float = SILICON_SATURATION_A
    emission: float = SILICON_EMISSION
    series_resistance_ohm: float = SILICON_SERIES_OHM
    # limits (optional)
    max_peak_current_a: float | None = None
    max_reservoir_f: float | None = None
    max_surge_current_a: float | None = None
    min_source_resistance_ohm: float | None = None
    # time from switch-on until the rectifier conducts (a valve's heater warm-up);
    # None: at once (silicon)
    warm_up_s: float | None = None
    # spread of a valve's drop among builds (None: a stated default)
    tolerance: Tolerance | None = None
    distribution: str = "uniform"
    part: str | None = None
    choose: tuple[str, ...] = ()
    price: float | None = None
    currency: str | None = None

    @property
    def perveance(self) -> float:
        """Child-Langmuir constant K [A/V^1.5] of one anode: K = I / V^1.5 at the given point."""
        if self.drop_v is None or self.drop_current_a is None:
            raise ValueError("valve rectifier needs drop_v and drop_current_a")
        return self.drop_current_a / self.drop_v**1.5


@dataclass(frozen=True)
class Link:
    """The element from the parent node to a rail.

    kind "wire" (first rail only), "resistor", "choke"; in briefs also "choose"
    (``among`` lists the kinds allowed) and a resistor or choke with its value
    left open (``resistance_ohm`` / ``inductance_h`` is None and ``part`` None).
    """

    kind: str = "wire"
    resistance_ohm: float | None = None  # resistor value, or choke DCR
    inductance_h: float | None = None  # choke only
    power_w: float | None = None  # resistor power rating
    upper_temperature_c: float | None = None  # resistor: upper category temperature [degC]
    current_rating_a: float | None = None  # choke DC current rating
    # spread among builds (None: catalog, E-series or a stated default)
    tolerance: Tolerance | None = None  # of the resistance, or of a choke's inductance
    resistance_tolerance: Tolerance | None = None  # of a choke's DCR
    distribution: str = "uniform"
    part: str | None = None
    among: tuple[str, ...] = ()
    price: float | None = None
    currency: str | None = None

    @property
    def is_open(self) -> bool:
        if self.kind == "choose":
            return True
        if self.kind == "resistor":
            return self.resistance_ohm is None
        if self.kind == "choke":
            return self.inductance_h is None or self.resistance_ohm is None
        return False


@dataclass(frozen=True)
class Capacitor:
    capacitance_f: float | None = None  # None: to be chosen (briefs)
    esr_ohm: float = 0.0
    voltage_rating_v: float | None = None
    ripple_rating_a: float | None = None  # rms, 100 Hz, at the rated temperature
    # spread of the capacitance among builds (None: catalog, E-series or a stated default)
    tolerance: Tolerance | None = None
    distribution: str = "uniform"
    rated_life_h: float | None = None  # endurance at the rated temperature [h]
    rated_temperature_c: float | None = None  # upper category temperature [degC]
    diameter_m: float | None = None  # can size, for its cooling surface
    height_m: float | None = None
    part: str | None = None
    price: float | None = None
    currency: str | None = None

    @property
    def is_open(self) -> bool:
        return self.capacitance_f is None


@dataclass(frozen=True)
class Rail:
    name: str
    parent: str | None = None  # name of the parent rail; None = rectifier output
    link: Link = field(default_factory=Link)
    capacitor: Capacitor | None = None  # None: no capacitor at this rail ("none")
    current_a: float = 0.0  # constant-current load at full signal
    load_resistance_ohm: float | None = None  # or a fixed resistive load instead
    idle_current_a: float | None = None  # default: current_a
    # resistor from the rail to ground, drawing current also with the valves cold
    bleeder_ohm: float | None = None
    # the stage draws nothing for this time after switch-on (its valves warm up)
    warm_up_s: float | None = None
    # air around this rail's parts when it differs from the chassis' [degC]
    ambient_c: float | None = None
    # brief targets (kept in designs so evaluate shows margins)
    voltage_v: float | None = None
    tolerance: float = 0.05
    hum_v: float | None = None  # allowed ripple, rms

    @property
    def idle_a(self) -> float:
        return self.current_a if self.idle_current_a is None else self.idle_current_a


@dataclass(frozen=True)
class Design:
    """A supply design (or a brief, when some choices are still open).

    Rails are in file order; a rail's parent always comes before it.
    """

    title: str
    mains: Mains
    transformer: Transformer
    rectifier: Rectifier
    rails: tuple[Rail, ...]
    source: str = "<memory>"  # file it was read from, for messages
    catalog: str | None = None  # catalog directory named by the brief, if any
    chassis: Chassis = field(default_factory=Chassis)

    def ambient_c(self, i: int) -> float:
        """Air temperature around rail i's parts [degC]: its own, else the chassis'."""
        own = self.rails[i].ambient_c
        return self.chassis.ambient if own is None else own

    @property
    def file_name(self) -> str:
        """The file the design was read from without its folders: how outputs meant to
        be sent to someone (report.html, netlists, pareto.json) name it."""
        return self.source.replace("\\", "/").rsplit("/", 1)[-1]

    def rail_index(self, name: str) -> int:
        for i, r in enumerate(self.rails):
            if r.name == name:
                return i
        raise KeyError(name)

    def parent_index(self, i: int) -> int:
        """Index of rail i's parent rail, or -1 for the rectifier output."""
        p = self.rails[i].parent
        return -1 if p is None else self.rail_index(p)

    def open_choices(self) -> list[str]:
        """Dotted keys of the choices still open (empty for a complete design)."""
        out = []
        if self.transformer.choose or self.transformer.open_circuit_v is None:
            out.append("transformer")
        if self.rectifier.choose:
            out.append("rectifier")
        for i, r in enumerate(self.rails):
            if r.link.is_open:
                out.append(f"rail[{i}].link")
            if r.capacitor is not None and r.capacitor.is_open:
                out.append(f"rail[{i}].capacitor")
        return out

    def is_complete(self) -> bool:
        return not self.open_choices()

    def with_rails(self, rails) -> Design:
        return replace(self, rails=tuple(rails))
