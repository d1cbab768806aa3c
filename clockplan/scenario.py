"""Scenario files: TOML describing one board, read into frozen, validated dataclasses.

Every mistake raises :class:`~clockplan.errors.ScenarioError` naming the file, the
key path and what was expected. Structural checks (unknown ``from``, loops) live in
:mod:`clockplan.topology`, which every :class:`Scenario` runs when it is made.
"""

from __future__ import annotations

import math
import os
import re
import stat
import tomllib
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from fractions import Fraction
from functools import cached_property
from importlib import resources
from pathlib import Path
from typing import TypeVar

from clockplan._fields import Fields, hint
from clockplan._frozen import FrozenDict, frozen
from clockplan.catalog import catalog_frequencies
from clockplan.errors import ArgumentTypeError, ScenarioError
from clockplan.peripherals import Peripheral, read_peripheral
from clockplan.peripherals.base import Divisors, largest
from clockplan.quantities import (
    HIGHEST_FREQUENCY,
    LOWEST_FREQUENCY,
    MAX_CHOICE,
    QuantityError,
    format_hz,
    parse_capacitance,
    parse_frequency,
    parse_frequency_list,
    parse_frequency_range,
    parse_integer_choices,
    parse_number,
    parse_positive_quantity,
    parse_quantity,
    parse_relative,
    parse_temperature_range,
    ratio_up,
)
from clockplan.registers import Encoding, read_register, requirement_values
from clockplan.sources import (
    SOURCE_KINDS,
    TUNING_FORK_COEFFICIENT_PPM,
    TUNING_FORK_TURNOVER_C,
    ComponentFrequency,
    Conditions,
    ParabolicCurve,
    Source,
    lc_oscillator,
    load_pulling,
    rc_oscillator,
)
from clockplan.text_safety import quoted
from clockplan.topology import check_structure

Item = TypeVar("Item", bound="Node")
"""One entry of a scenario section: a source, a PLL, a divider, a mux or a peripheral."""

__all__ = [
    "Pll",
    "Divider",
    "Mux",
    "Scenario",
    "load_scenario",
    "parse_scenario",
    "default_scenario_path",
    "MAX_CANDIDATES",
    "RANKING_GOALS",
    "MAX_RATES",
]

RANKING_GOALS = ("worst-share", "cost", "fastest", "ceilings")
"""What ``rank_by`` may put first, in the default ranking order."""
MAX_CANDIDATES = 2_000_000
"""The most candidate frequencies the sources together may offer the search."""
CANDIDATES_TOGETHER = "the sources offer {} candidate frequencies together"
MAX_ITEMS = 1000
"""The most entries one section (sources, plls, dividers, muxes, peripherals) may hold."""
MAX_RATES = 1000
"""The most rates (baud rates, bit rates, clocks …) all peripherals together may ask for;
each is a requirement of the search, and a model of tens of thousands never finishes."""
MAX_NAME_LENGTH = 64
"""The longest name of a clock or peripheral: it becomes part of settings keys and C names."""
MAX_FILE_BYTES = 4 * 2**20
"""The largest scenario file read: a real one is a few kilobytes, /dev/zero is endless."""
MAX_YEARS = 100
"""The longest service life that aging may be asked to cover."""
MAX_FRACTION_BITS = 24
"""Widest fractional-N modulus accepted (2**24), to keep the model inside 64-bit integers."""

_NAME = re.compile(r"[A-Za-z][A-Za-z0-9_]*")
_SECTIONS = ("title", "conditions", "sources", "plls", "dividers", "muxes", "peripherals")


@dataclass(frozen=True)
class Pll:
    """A phase-locked loop: input ÷ reference divider → PFD, × multiplier → VCO (its output)."""

    name: str
    input: str
    reference_divider: Divisors
    pfd: tuple[Fraction, Fraction]
    """Allowed phase-frequency-detector input range, hertz."""
    multiplier: Divisors
    """Allowed whole part of the feedback divider."""
    fraction_bits: int
    """Fractional-N modulus is 2**fraction_bits; 0 for an integer-N loop."""
    vco: tuple[Fraction, Fraction]
    """Allowed VCO range, hertz."""


@dataclass(frozen=True)
class Divider:
    """A divider (or prescaler): output = input ÷ one of the allowed values."""

    name: str
    input: str
    divide: Divisors
    minimum: Fraction | None = None
    """Lowest allowed output frequency, hertz."""
    maximum: Fraction | None = None
    """Highest allowed output frequency, hertz."""
    fastest: bool = False
    """Whether the search should make this clock as fast as allowed (a secondary goal)."""


@dataclass(frozen=True)
class Mux:
    """A clock selector: its output is one of its inputs, chosen by the search."""

    name: str
    inputs: tuple[str, ...]
    maximum: Fraction | None = None
    """Highest allowed output frequency, hertz."""


Node = Source | Pll | Divider | Mux | Peripheral
"""Anything of a scenario that has a name."""


@dataclass(frozen=True)
class Scenario:
    """One board: its oscillators, clock structure and peripherals."""

    title: str
    file: str
    conditions: Conditions
    sources: tuple[Source, ...]
    plls: tuple[Pll, ...]
    dividers: tuple[Divider, ...]
    muxes: tuple[Mux, ...]
    peripherals: tuple[Peripheral, ...]
    rank_by: tuple[str, ...] = ("worst-share", "cost", "fastest", "ceilings")
    """The goals in ranking order, most important first (every one of RANKING_GOALS): the
    worst share of an allowance, the cost of the oscillators in use, the clocks marked
    "fastest", the rates under a ceiling."""
    registers: Mapping[str, Mapping[str, Encoding]] = field(default_factory=FrozenDict)
    """How the chip's registers encode settings, by node name and field (``register`` keys)."""

    def __post_init__(self) -> None:
        """Check a scenario built by hand as the loader checks a file, so that the search
        and the evaluator only ever meet a well-formed board (or raise a ScenarioError)."""
        where = self.file if isinstance(self.file, str) else "<scenario>"
        fields: tuple[tuple[str, object, type], ...] = (
            ("title", self.title, str),
            ("file", self.file, str),
            ("conditions", self.conditions, Conditions),
            ("rank_by", self.rank_by, tuple),
        )
        for key, value, kind in fields:
            if not isinstance(value, kind):
                raise ScenarioError(where, key, f"expected {kind.__name__}, got {_type(value)}")
        if sorted(map(str, self.rank_by)) != sorted(RANKING_GOALS):
            known = ", ".join(RANKING_GOALS)
            raise ScenarioError(where, "rank_by", f"expected each of {known} once, in any order")
        sections: tuple[tuple[str, tuple[object, ...], type], ...] = (
            ("sources", self.sources, Source),
            ("plls", self.plls, Pll),
            ("dividers", self.dividers, Divider),
            ("muxes", self.muxes, Mux),
            ("peripherals", self.peripherals, Peripheral),
        )
        for section, items, kind in sections:
            if not isinstance(items, tuple):
                raise ScenarioError(where, section, f"expected a tuple, got {_type(items)}")
            for item in items:
                if not isinstance(item, kind):
                    raise ScenarioError(
                        where, section, f"expected {kind.__name__} entries, got {_type(item)}"
                    )
        if not self.sources:
            raise ScenarioError(where, "sources", "is empty; a scenario needs an oscillator")
        for source in self.sources:
            if not source.candidates:
                raise ScenarioError(where, f"sources.{source.name}.choose", "offers no frequency")
        _check_unique_names(self)
        check_structure(self)

    def source(self, name: str) -> Source:
        """The source called ``name``."""
        node = self.node(name)
        if not isinstance(node, Source):
            raise KeyError(name)
        return node

    def node(self, name: str) -> Node:
        """The source, PLL, divider, mux or peripheral called ``name`` (KeyError if none)."""
        return self._nodes[name]

    @cached_property
    def _nodes(self) -> dict[str, Node]:
        """Every node by name, built once (names are unique across sections)."""
        groups = (self.sources, self.plls, self.dividers, self.muxes, self.peripherals)
        return {item.name: item for group in groups for item in group}

    @property
    def clock_names(self) -> tuple[str, ...]:
        """Every clock node (sources, PLLs, dividers, muxes) in file order."""
        groups = (self.sources, self.plls, self.dividers, self.muxes)
        return tuple(item.name for group in groups for item in group)


def default_scenario_path() -> Path:
    """The bundled default scenario (a small board of our own invention)."""
    return Path(str(resources.files("clockplan").joinpath("data/default.toml")))


def load_scenario(path: str | Path) -> Scenario:
    """Read and check a scenario file; raise :class:`ScenarioError` on any mistake."""
    if not isinstance(path, (str, Path)):
        raise ArgumentTypeError(
            f"load_scenario: expected a path (str or Path), got {type(path).__name__}"
        )
    if str(path) == "":
        raise ScenarioError('""', "", "the file name is empty; give a scenario file")
    return parse_scenario(_read_text(Path(path)), str(path))


def _read_text(path: Path) -> str:
    """The file's text (UTF-8, a byte-order mark allowed), refusing what is no scenario file.

    The file is opened without blocking and must be a regular file: a FIFO or a device
    would otherwise wait for a writer, or never end.
    """
    try:
        descriptor = os.open(path, os.O_RDONLY | os.O_NONBLOCK | getattr(os, "O_CLOEXEC", 0))
    except FileNotFoundError:
        raise ScenarioError(str(path), "", "no such file") from None
    except IsADirectoryError:
        raise ScenarioError(str(path), "", "is a directory; expected a scenario file") from None
    except OSError as error:
        raise ScenarioError(str(path), "", f"cannot be read ({error.strerror or error})") from None
    except ValueError as error:  # a path holding a NUL character
        raise ScenarioError(str(path), "", f"cannot be read ({error})") from None
    mode = os.fstat(descriptor).st_mode
    if not stat.S_ISREG(mode):
        os.close(descriptor)
        if stat.S_ISDIR(mode):
            raise ScenarioError(str(path), "", "is a directory; expected a scenario file")
        problem = f"is {_file_type(mode)}, not a regular file; expected a scenario file"
        raise ScenarioError(str(path), "", problem)
    with os.fdopen(descriptor, "rb") as stream:
        try:
            data = stream.read(MAX_FILE_BYTES + 1)
        except OSError as error:
            raise ScenarioError(
                str(path), "", f"cannot be read ({error.strerror or error})"
            ) from None
    if len(data) > MAX_FILE_BYTES:
        raise ScenarioError(
            str(path), "", f"is larger than {MAX_FILE_BYTES // 2**20} MiB; expected a scenario file"
        )
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        line = data[: error.start].count(b"\n") + 1
        raise ScenarioError(
            str(path), "", f"line {line} is not UTF-8 text (byte {data[error.start]:#04x})"
        ) from None


def _file_type(mode: int) -> str:
    """What kind of non-regular file ``mode`` describes, for the message that refuses it."""
    kinds = (
        (stat.S_ISFIFO, "a FIFO (named pipe)"),
        (stat.S_ISCHR, "a character device"),
        (stat.S_ISBLK, "a block device"),
        (stat.S_ISSOCK, "a socket"),
    )
    return next((name for test, name in kinds if test(mode)), "a special file")


def parse_scenario(text: str, file: str = "<scenario>") -> Scenario:
    """Read a scenario from TOML text; ``file`` names it in error messages."""
    if not isinstance(file, str):
        raise ArgumentTypeError(f"parse_scenario: file must be a str, got {type(file).__name__}")
    if not isinstance(text, str):
        raise ArgumentTypeError(
            f"parse_scenario: expected the TOML text as a str, got {type(text).__name__}"
        )
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise ScenarioError(file, "", f"is not valid TOML ({error})") from None
    except ValueError:  # tomllib's own int() refuses numbers of more than 4300 digits
        raise ScenarioError(
            file, "", "is not valid TOML (a number is thousands of digits long)"
        ) from None
    except RecursionError:
        raise ScenarioError(
            file, "", "is not valid TOML (arrays or tables nest too deeply)"
        ) from None
    top = Fields(document, file=file, path="")
    title = top.take_str("title", Path(file).stem)
    rank_by = top.take("rank_by", _ranking, RANKING_GOALS)
    conditions = _read_conditions(top)
    _count_candidate_ranges(top)
    candidates = _Budget(MAX_CANDIDATES, CANDIDATES_TOGETHER)
    registers: dict[str, Mapping[str, Encoding]] = {}
    read_source = lambda f, n: _read_source(f, n, conditions, candidates)  # noqa: E731
    sources = _read_section(top, "sources", read_source, registers)
    if not sources:
        raise top.error("sources", "is missing; a scenario needs at least one oscillator")
    plls = _read_section(top, "plls", _read_pll, registers)
    dividers = _read_section(top, "dividers", _read_divider, registers)
    muxes = _read_section(top, "muxes", _read_mux, registers)
    rates = _Budget(MAX_RATES, "the peripherals ask for {} rates together")
    read = lambda f, n: _read_peripheral(f, n, rates)  # noqa: E731
    peripherals = _read_section(top, "peripherals", read, registers)
    top.finish()
    return Scenario(
        title,
        file,
        conditions,
        sources,
        plls,
        dividers,
        muxes,
        peripherals,
        rank_by,
        frozen(registers),
    )


def _register_values(node: Node) -> dict[str, tuple[Divisors, ...]]:
    """The settings of a node a ``register`` table may name, each with its allowed values."""
    if isinstance(node, Pll):
        fraction = {"fraction": (range(2**node.fraction_bits),)} if node.fraction_bits else {}
        return {
            "reference_divider": (node.reference_divider,),
            "multiplier": (node.multiplier,),
            **fraction,
        }
    if isinstance(node, Divider):
        return {"divide": (node.divide,)}
    if isinstance(node, Mux):
        return {"input": (range(len(node.inputs)),)}
    if isinstance(node, Peripheral):
        values: dict[str, tuple[Divisors, ...]] = {}
        for requirement in node.requirements:
            for name, sets in requirement_values(requirement).items():
                values[name] = tuple(dict.fromkeys((*values.get(name, ()), *sets)))
        return values
    return {}


class _Budget:
    """A count the items of a scenario share (candidate frequencies, rates), spent as read."""

    def __init__(self, limit: int, problem: str) -> None:
        self.limit = limit
        self.problem = problem
        """What is refused, with ``{}`` for the total asked for."""
        self.spent = 0

    def spend(self, count: int, file: str, key: str) -> None:
        """Count ``count`` more, or refuse at ``key`` when the total would pass the limit."""
        if self.spent + count > self.limit:
            total = self.spent + count
            raise ScenarioError(file, key, f"{self.problem.format(total)}; at most {self.limit}")
        self.spent += count


def _ranking(value: object) -> tuple[str, ...]:
    """``rank_by``: one goal or a list of goals to rank first; the others follow in the
    default order."""
    goals = [value] if isinstance(value, str) else value
    if not isinstance(goals, list) or not goals or not all(isinstance(g, str) for g in goals):
        raise QuantityError(
            f"{value!r} is not a goal or a list of goals; give some of "
            + ", ".join(f'"{goal}"' for goal in RANKING_GOALS)
        )
    for goal in goals:
        if goal not in RANKING_GOALS:
            raise QuantityError(
                f"{goal!r} is not a goal{hint(goal, RANKING_GOALS)}; give some of "
                + ", ".join(f'"{known}"' for known in RANKING_GOALS)
            )
    if len(set(goals)) != len(goals):
        raise QuantityError(f"{value!r} names a goal twice")
    return (*goals, *(goal for goal in RANKING_GOALS if goal not in goals))


def _read_section(
    top: Fields,
    section: str,
    read: Callable[[Fields, str], Item],
    found: dict[str, Mapping[str, Encoding]],
) -> tuple[Item, ...]:
    """The items of one section; their ``register`` tables go into ``found`` by name."""
    if not top.has(section):
        top.take(section, dict, {})
        return ()
    table = top.sub(section)
    if len(table.table) > MAX_ITEMS:
        raise top.error(section, f"holds {len(table.table)} entries; at most {MAX_ITEMS}")
    items: list[Item] = []
    for name in table.table:
        if not _NAME.fullmatch(name):
            raise table.error(
                name, "names must start with a letter and hold only letters, digits and _"
            )
        if len(name) > MAX_NAME_LENGTH:
            raise table.error(name, f"is {len(name)} characters long; at most {MAX_NAME_LENGTH}")
        fields = table.sub(name)
        items.append(read(fields, name))
        if fields.has("register"):
            found[name] = read_register(fields, _register_values(items[-1]))
        fields.finish()
    table.finish()
    return tuple(items)


def _read_conditions(top: Fields) -> Conditions:
    if not top.has("conditions"):
        top.take("conditions", dict, None)
        return Conditions()
    fields = top.sub("conditions")
    default = Conditions()
    temperature = fields.take("temperature", parse_temperature_range, default.temperature)
    years = fields.take("years", parse_number, default.years)
    if not 0 <= years <= MAX_YEARS:
        raise fields.error("years", f"{years} is outside 0..{MAX_YEARS}; expected years of service")
    fields.finish()
    return Conditions(temperature, years)


def _read_source(fields: Fields, name: str, conditions: Conditions, budget: _Budget) -> Source:
    kind_name = fields.take_str("kind", choices=tuple(SOURCE_KINDS))
    kind = SOURCE_KINDS[kind_name]
    if isinstance(fields.table.get("choose"), dict):
        candidates: tuple[Fraction, ...] | None = _candidate_range(fields.sub("choose"), budget)
    else:
        candidates = fields.take("choose", _candidates, None)
        if candidates is not None:
            budget.spend(len(candidates), fields.file, fields.key("choose"))
    default_tolerance = kind.tolerance
    if kind_name in ("rc", "lc"):
        built = _read_parts(fields, kind_name)
        if candidates is not None:
            raise fields.error(
                "choose",
                f"an {kind_name} oscillator's frequency follows from its "
                "parts; give parts or choose, not both",
            )
        candidates, default_tolerance = (built.nominal,), built.tolerance
    elif candidates is None:
        raise fields.error("choose", 'is missing; give "catalog", a list or { from, to, step }')
    tolerance = fields.take("tolerance", parse_relative, default_tolerance)
    default_stability = kind.stability
    if kind_name == "tuning-fork":
        curve = ParabolicCurve(
            fields.take("temperature_coefficient", _per_square_degree, TUNING_FORK_COEFFICIENT_PPM),
            fields.take("turnover", _degrees, TUNING_FORK_TURNOVER_C),
        )
        low, high = conditions.temperature
        default_stability = max(abs(offset) for offset in curve.extremes(low, high))
    stability = fields.take("stability", parse_relative, default_stability)
    aging = fields.take("aging", parse_relative, kind.aging_per_year * conditions.years)
    pulling = Fraction(0)
    if kind_name in ("crystal", "tuning-fork") and fields.has("circuit"):
        pulling = _read_circuit(fields.sub("circuit"))
    cost = fields.take("cost", _cost, None)
    return Source(
        name,
        kind_name,
        candidates,
        ratio_up(tolerance),
        ratio_up(stability),
        ratio_up(aging),
        ratio_up(pulling),
        cost,
    )


def _per_square_degree(value: object) -> Fraction:
    """A tuning fork's coefficient in ppm per °C², written like "-0.034 ppm" (sign kept)."""
    coefficient = parse_quantity(value, "relative") * 10**6
    if not -1 <= coefficient <= 0:
        raise QuantityError(
            f'{value!r} is not a tuning-fork coefficient such as "-0.034 ppm" '
            "(per °C², between -1 and 0 ppm)"
        )
    return coefficient


def _degrees(value: object) -> Fraction:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise QuantityError(f"{value!r} is not a temperature in °C such as 25")
    degrees = parse_number(value)
    if not -100 <= degrees <= 200:
        raise QuantityError(f"{value!r} is not a plausible turnover temperature in °C")
    return degrees


COST_DECIMALS = 6
"""A cost may have at most this many decimal places: the search adds costs × counts on whole
numbers, so their common denominator must stay small (10**6 · 10**9 · 1000 sources < 2**62)."""


def _cost(value: object) -> Fraction:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise QuantityError(f"{quoted(value)} is not a cost; give a plain number like 0.35")
    cost = parse_number(value)
    if cost < 0 or cost > 10**9:
        raise QuantityError(f"{quoted(value)} is not a cost between 0 and 10**9")
    if (cost * 10**COST_DECIMALS).denominator != 1:
        raise QuantityError(
            f"{quoted(value)} has more than {COST_DECIMALS} decimal places; costs are counted "
            "in millionths, so round it"
        )
    return cost


def _read_parts(fields: Fields, kind: str) -> ComponentFrequency:
    """An RC or LC oscillator's frequency and tolerance from ``parts = { … }``."""
    if not fields.has("parts"):
        raise fields.error("parts", f"is missing; an {kind} oscillator is computed from its parts")
    parts = fields.sub("parts")
    capacitance = parts.take("capacitance", _positive_capacitance)
    capacitor_tolerance = parts.take("capacitor_tolerance", _part_tolerance, Fraction(5, 100))
    if kind == "rc":
        r1 = parts.take("r1", _resistance)
        r2 = parts.take("r2", _resistance)
        resistor_tolerance = parts.take("resistor_tolerance", _part_tolerance, Fraction(1, 100))
    else:
        inductance = parts.take("inductance", _inductance)
        inductor_tolerance = parts.take("inductor_tolerance", _part_tolerance, Fraction(5, 100))
    try:  # only the formulas raise here; a bad key was already located above
        if kind == "rc":
            built = rc_oscillator(r1, r2, capacitance, resistor_tolerance, capacitor_tolerance)
        else:
            built = lc_oscillator(inductance, capacitance, inductor_tolerance, capacitor_tolerance)
    except ValueError as error:
        raise fields.error("parts", str(error)) from None
    parts.finish()
    if not LOWEST_FREQUENCY <= built.nominal <= HIGHEST_FREQUENCY:
        raise fields.error(
            "parts",
            f"the parts give {format_hz(built.nominal)}, not a plausible oscillator frequency",
        )
    return built


def _read_circuit(fields: Fields) -> Fraction:
    """The pulling a crystal's built load circuit leaves (``circuit = { … }``)."""
    load = fields.take("load", _positive_capacitance)
    capacitors = fields.take("capacitors", _capacitor_pair)
    stray = fields.take("stray", parse_capacitance, 3 * Fraction(1, 10**12))
    motional = fields.take("motional", _positive_capacitance)
    shunt = fields.take("shunt", _positive_capacitance)
    fields.finish()
    if stray >= load:
        raise fields.error("stray", "is at or above the crystal's specified load")
    return load_pulling(load, capacitors, stray, motional, shunt)


def _positive_capacitance(value: object) -> Fraction:
    capacitance = parse_capacitance(value)
    if capacitance <= 0 or capacitance > 1:
        raise QuantityError(f'{value!r} is not a positive capacitance such as "12 pF"')
    return capacitance


def _capacitor_pair(value: object) -> tuple[Fraction, Fraction]:
    if not isinstance(value, list) or len(value) != 2:
        raise QuantityError('expected the two load capacitors, like ["18 pF", "18 pF"]')
    first, second = (_positive_capacitance(item) for item in value)
    return first, second


def _part_tolerance(value: object) -> Fraction:
    tolerance = parse_relative(value)
    if tolerance >= Fraction(1, 2):
        raise QuantityError(f"{value!r} is not a part tolerance below 50 %")
    return tolerance


def _resistance(value: object) -> Fraction:
    resistance = parse_positive_quantity(value, "resistance")
    if resistance > 10**12:
        raise QuantityError(f"{value!r} is not a plausible resistance")
    return resistance


def _inductance(value: object) -> Fraction:
    inductance = parse_positive_quantity(value, "inductance")
    if inductance > 10**3:
        raise QuantityError(f"{value!r} is not a plausible inductance")
    return inductance


def _candidates(value: object) -> tuple[Fraction, ...]:
    if value == "catalog":
        return catalog_frequencies()
    if isinstance(value, list):
        if not value:
            raise QuantityError("an empty list offers no frequency; give at least one")
        return tuple(dict.fromkeys(parse_frequency(item) for item in value))
    if isinstance(value, str):
        return parse_frequency_list(value)
    raise QuantityError('expected "catalog", a list of frequencies or { from, to, step }')


def _range_count(fields: Fields) -> tuple[Fraction, Fraction, int]:
    """The start, step and count of ``choose = { from, to, step }``, refusing a huge range."""
    low = fields.take("from", parse_frequency)
    high = fields.take("to", parse_frequency)
    step = fields.take("step", parse_frequency)
    fields.finish()
    if low > high:
        raise fields.error("to", f"{format_hz(high)} is below from = {format_hz(low)}")
    count = int((high - low) // step) + 1
    if count > MAX_CANDIDATES:
        raise fields.error("step", f"the range holds {count} frequencies; at most {MAX_CANDIDATES}")
    return low, step, count


def _count_candidate_ranges(top: Fields) -> None:
    """Refuse stepped candidate ranges that pass the limit together, before building any:
    two million ``Fraction`` objects take seconds to make."""
    sources = top.table.get("sources")
    if not isinstance(sources, dict):
        return
    section = Fields(sources, file=top.file, path="sources")
    budget = _Budget(MAX_CANDIDATES, CANDIDATES_TOGETHER)
    for name, table in sources.items():
        if isinstance(table, dict) and isinstance(table.get("choose"), dict):
            choose = Fields(table["choose"], file=top.file, path=f"{section.key(name)}.choose")
            budget.spend(_range_count(choose)[2], choose.file, choose.path)


def _candidate_range(fields: Fields, budget: _Budget) -> tuple[Fraction, ...]:
    """Candidates from ``choose = { from = "4 MHz", to = "26 MHz", step = "1 kHz" }``."""
    low, step, count = _range_count(fields)
    budget.spend(count, fields.file, fields.path)
    # On a common denominator the candidates are whole numbers over it, cheaper to build.
    denominator = math.lcm(low.denominator, step.denominator)
    first, stride = int(low * denominator), int(step * denominator)
    return tuple(Fraction(first + stride * k, denominator) for k in range(count))


def _read_pll(fields: Fields, name: str) -> Pll:
    source = fields.take_str("from")
    reference = fields.take("reference_divider", parse_integer_choices, (1,))
    pfd = fields.take("pfd", parse_frequency_range, None)
    multiplier = fields.take("multiplier", parse_integer_choices)
    fraction_bits = fields.take_int("fraction_bits", 0, minimum=0, maximum=MAX_FRACTION_BITS)
    vco = fields.take("vco", parse_frequency_range)
    if pfd is None:
        pfd = (Fraction(0), vco[1])
    return Pll(name, source, reference, pfd, multiplier, fraction_bits, vco)


def _read_divider(fields: Fields, name: str) -> Divider:
    source = fields.take_str("from")
    divide = fields.take("divide", parse_integer_choices)
    minimum = fields.take("min", parse_frequency, None)
    maximum = fields.take("max", parse_frequency, None)
    goal = fields.take_str("goal", "none", choices=("none", "fastest"))
    if minimum is not None and maximum is not None and minimum > maximum:
        raise fields.error("min", "is above max")
    return Divider(name, source, divide, minimum, maximum, goal == "fastest")


def _read_mux(fields: Fields, name: str) -> Mux:
    inputs = fields.take("from", _name_list)
    maximum = fields.take("max", parse_frequency, None)
    return Mux(name, inputs, maximum)


def _read_peripheral(fields: Fields, name: str, budget: _Budget) -> Peripheral:
    """Read one peripheral by its kind; refuse divisors no 64-bit model can hold."""
    peripheral = read_peripheral(fields, name)
    budget.spend(len(peripheral.requirements), fields.file, fields.path)
    for requirement in peripheral.requirements:
        widest = max(largest(values) for values in requirement.divisor.value_sets)
        if widest > MAX_CHOICE:
            raise ScenarioError(
                fields.file,
                fields.path,
                f"{requirement.label}: its divisor reaches {widest}, past 2**62; narrow the "
                "ranges that multiply into it",
            )
    return peripheral


def _name_list(value: object) -> tuple[str, ...]:
    if not isinstance(value, list) or not all(isinstance(item, str) for item in value):
        raise QuantityError('expected a list of clock names, like ["bus", "usb_clock"]')
    if len(set(value)) != len(value):
        raise QuantityError(f"{value!r} names an input twice")
    return tuple(value)


def _type(value: object) -> str:
    return type(value).__name__


def _check_unique_names(scenario: Scenario) -> None:
    seen: dict[str, str] = {}
    sections: dict[str, tuple[Node, ...]] = {
        "sources": scenario.sources,
        "plls": scenario.plls,
        "dividers": scenario.dividers,
        "muxes": scenario.muxes,
        "peripherals": scenario.peripherals,
    }
    for section, items in sections.items():
        for item in items:
            if item.name in seen:
                raise ScenarioError(
                    scenario.file,
                    f"{section}.{item.name}",
                    f"the name is already used in {seen[item.name]}",
                )
            seen[item.name] = section
