"""``clockplan crystals``: which oscillator frequencies serve these rates, ranked; no file."""

from __future__ import annotations

import argparse
import json
import time
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction
from typing import Any, TypeVar

from rich import box
from rich.console import Console
from rich.measure import Measurement
from rich.table import Table
from rich.text import Text

from clockplan.catalog import catalog_frequencies
from clockplan.crystals import (
    DEFAULT_ALLOWANCE,
    Candidate,
    Candidates,
    CrystalSearch,
    FrequencyGrid,
    PllLimits,
    RateResult,
    RateTarget,
    audio_targets,
    frequency_grid,
    plain_targets,
    search_crystals,
    uart_targets,
    usb_full_speed_target,
)
from clockplan.errors import InputError
from clockplan.exits import Exit
from clockplan.peripherals.base import Divisors
from clockplan.phrases import Phrases, listed
from clockplan.quantities import (
    QuantityError,
    exact_string,
    format_hz,
    format_relative,
    parse_frequency,
    parse_frequency_list,
    parse_frequency_range,
    parse_integer_choices,
    parse_relative,
    parse_whole,
)

Parsed = TypeVar("Parsed")

DEFAULTS = {
    "oversampling": "16",
    "fraction_bits": "0",
    "mclk": "256",
    "divisor": "1..65535",
    "reference_divider": "1..16",
    "multiplier": "8..64",
    "vco": "96 MHz..480 MHz",
    "pfd": "1 MHz..4 MHz",
    "step": "100 Hz",
    "top": "10",
}
"""Option defaults, as text (each is parsed like the user's own value)."""

ALLOWANCE_BASIS = "common practice, no source"
"""Basis of the default allowance for audio and plain rates."""


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``crystals`` subcommand."""
    parser = subparsers.add_parser(
        "crystals",
        help="which oscillator frequencies give these rates exactly or closest, ranked",
        description="Rank oscillator frequencies for rates given on the command line: "
        "oscillators that give every rate exactly first, then by the worst error as a share "
        "of each rate's allowance, ties by frequency. Each rate is reached by a whole divisor "
        "from the oscillator, or, with --pll, from one PLL's VCO.",
        epilog='Rates: "115200", "44.1k", "48 kHz", "1kHz", "12M"; lists are comma-separated '
        "and the options may repeat. Synthesis error only: the oscillator's own tolerance "
        "comes on top.",
    )
    rates = parser.add_argument_group("rates")
    rates.add_argument("--baud", metavar="RATES", action="append", help="UART baud rates")
    rates.add_argument(
        "--oversampling", metavar="N", help="UART samples per bit (default 16; even, 4..64)"
    )
    rates.add_argument(
        "--fraction-bits", metavar="N", help="fraction bits of the baud divisor (default 0)"
    )
    rates.add_argument(
        "--usb-full-speed",
        action="store_true",
        help="48 MHz within ±0.05 %% (USB 2.0 §7.1.11: a host, hub or high-speed-capable device)",
    )
    rates.add_argument(
        "--full-speed-only-device",
        action="store_true",
        help="with --usb-full-speed: the device runs at full speed only, so ±0.25 %% applies",
    )
    rates.add_argument("--fs", metavar="RATES", action="append", help="audio sampling rates")
    rates.add_argument("--mclk", metavar="RATIO", help="master clock = RATIO × fs (default 256)")
    rates.add_argument("--rate", metavar="RATES", action="append", help="plain rates, in Hz")
    rates.add_argument(
        "--allowance",
        metavar="REL",
        help='allowance of --fs and --rate rates, e.g. "10 ppm" '
        f"(default {format_relative(DEFAULT_ALLOWANCE)}, {ALLOWANCE_BASIS})".replace("%", "%%"),
    )
    structure = parser.add_argument_group("structure (default: whole divisors from the oscillator)")
    structure.add_argument(
        "--divisor",
        metavar="CHOICES",
        help='each rate\'s divisor: "1..65535" (default), "pow2 0..9" or a list "1,2,4"',
    )
    structure.add_argument(
        "--pll", action="store_true", help="oscillator ÷ R × M → one VCO, then ÷ per rate"
    )
    structure.add_argument(
        "--reference-divider", metavar="CHOICES", help="R with --pll (default 1..16)"
    )
    structure.add_argument("--multiplier", metavar="CHOICES", help="M with --pll (default 8..64)")
    structure.add_argument(
        "--vco", metavar="RANGE", help='VCO range with --pll (default "96 MHz..480 MHz")'
    )
    structure.add_argument(
        "--pfd", metavar="RANGE", help='phase-detector range with --pll (default "1 MHz..4 MHz")'
    )
    where = parser.add_argument_group("where to look (default: --catalog)")
    choice = where.add_mutually_exclusive_group()
    choice.add_argument(
        "--catalog", action="store_true", help="the built-in catalog of common frequencies"
    )
    choice.add_argument("--candidates", metavar="FREQS", help='a list, e.g. "8 MHz,12 MHz"')
    choice.add_argument("--range", metavar="RANGE", help='a stepped range, e.g. "1 MHz..50 MHz"')
    where.add_argument("--step", metavar="FREQ", help='step of --range (default "100 Hz")')
    parser.add_argument("--top", metavar="K", help="how many to list (default 10, at most 1000)")
    parser.add_argument("--json", action="store_true", help="print machine-readable JSON")
    parser.set_defaults(func=run)


@dataclass(frozen=True)
class CrystalsOptions:
    """The ``crystals`` command's options as typed: texts still to be read, and the switches."""

    baud: tuple[str, ...]
    oversampling: str | None
    fraction_bits: str | None
    usb_full_speed: bool
    full_speed_only_device: bool
    fs: tuple[str, ...]
    mclk: str | None
    rate: tuple[str, ...]
    allowance: str | None
    divisor: str | None
    pll: bool
    reference_divider: str | None
    multiplier: str | None
    vco: str | None
    pfd: str | None
    candidates: str | None
    range: str | None
    step: str | None
    top: str | None
    json: bool

    @classmethod
    def from_namespace(cls, args: argparse.Namespace) -> CrystalsOptions:
        """The options argparse read, taken once at the command's boundary."""
        return cls(
            baud=tuple(args.baud or ()),
            oversampling=args.oversampling,
            fraction_bits=args.fraction_bits,
            usb_full_speed=args.usb_full_speed,
            full_speed_only_device=args.full_speed_only_device,
            fs=tuple(args.fs or ()),
            mclk=args.mclk,
            rate=tuple(args.rate or ()),
            allowance=args.allowance,
            divisor=args.divisor,
            pll=args.pll,
            reference_divider=args.reference_divider,
            multiplier=args.multiplier,
            vco=args.vco,
            pfd=args.pfd,
            candidates=args.candidates,
            range=args.range,
            step=args.step,
            top=args.top,
            json=args.json,
        )


def run(args: argparse.Namespace) -> int:
    """The ``crystals`` command: read the options once, then :func:`crystals_report`."""
    return crystals_report(CrystalsOptions.from_namespace(args))


def crystals_report(options: CrystalsOptions) -> int:
    """Search and print; exit 0 when the best oscillator meets every allowance, else 1."""
    _refuse_stray_options(options)
    divisor = _parsed(options.divisor, "divisor", parse_integer_choices)
    targets = _targets(options, divisor)
    pll = _pll(options) if options.pll else None
    candidates, where = _candidates(options)
    top = _parsed(options.top, "top", lambda text: parse_whole(text, minimum=1, maximum=1000))
    started = time.perf_counter()
    try:
        search = search_crystals(targets, candidates, pll=pll, top=top)
    except QuantityError as error:
        raise InputError("--reference-divider, --multiplier", str(error)) from None
    elapsed = time.perf_counter() - started
    if options.json:
        print(json.dumps(_as_json(search, where), indent=2))
    else:
        _print_report(search, where, elapsed)
    return Exit.OK if search.ranked and search.ranked[0].fits else Exit.NO_PLAN


def _refuse_stray_options(options: CrystalsOptions) -> None:
    """Options that shape something not asked for are mistakes: say which."""
    needs: list[tuple[str, str | None, bool, str]] = [
        ("--oversampling", options.oversampling, bool(options.baud), "--baud"),
        ("--fraction-bits", options.fraction_bits, bool(options.baud), "--baud"),
        ("--mclk", options.mclk, bool(options.fs), "--fs"),
        ("--allowance", options.allowance, bool(options.fs or options.rate), "--fs or --rate"),
        ("--step", options.step, options.range is not None, "--range"),
    ]
    needs += [
        (option, value, options.pll, "--pll")
        for option, value in (
            ("--reference-divider", options.reference_divider),
            ("--multiplier", options.multiplier),
            ("--vco", options.vco),
            ("--pfd", options.pfd),
        )
    ]
    for option, value, needed, what in needs:
        if value is not None and not needed:
            raise InputError(option, f"applies only with {what}")


def _parsed(value: str | None, name: str, parse: Callable[[str], Parsed]) -> Parsed:
    """Parse option ``name``'s value (or its default), a QuantityError becoming an InputError."""
    text = DEFAULTS[name] if value is None else value
    try:
        return parse(text)
    except QuantityError as error:
        raise InputError(f"--{name.replace('_', '-')}", str(error)) from None


def _rate(text: str) -> Fraction:
    """A rate as people type it: a plain number is hertz (or baud); "44.1k", "12M" work."""
    return parse_frequency(text, bare_unit="Hz")


def _rate_list(text: str) -> tuple[Fraction, ...]:
    return parse_frequency_list(text, bare_unit="Hz")


def _rate_range(text: str) -> tuple[Fraction, Fraction]:
    return parse_frequency_range(text, bare_unit="Hz")


def _rates(values: tuple[str, ...], option: str) -> tuple[Fraction, ...]:
    """Every rate of a repeatable, comma-separated option, in order, without repeats."""
    found: dict[Fraction, None] = {}
    for text in values:
        try:
            found.update(dict.fromkeys(_rate_list(text)))
        except QuantityError as error:
            raise InputError(option, str(error)) from None
    return tuple(found)


def _targets(options: CrystalsOptions, divisor: Divisors) -> tuple[RateTarget, ...]:
    """The rates asked for, each with its divided clock, divisor counts and allowance."""
    targets: list[RateTarget] = []
    bauds = _rates(options.baud, "--baud")
    if bauds:
        oversampling = _parsed(options.oversampling, "oversampling", _oversampling)
        bits = _parsed(
            options.fraction_bits,
            "fraction_bits",
            lambda text: parse_whole(text, minimum=0, maximum=16),
        )
        targets += uart_targets(
            bauds, oversampling=oversampling, fraction_bits=bits, divisor=divisor
        )
    if options.full_speed_only_device and not options.usb_full_speed:
        raise InputError(
            "--full-speed-only-device", "says what the USB device is; add --usb-full-speed"
        )
    if options.usb_full_speed:
        only = options.full_speed_only_device
        targets.append(usb_full_speed_target(divisor=divisor, full_speed_only_device=only))
    allowance, basis = DEFAULT_ALLOWANCE, ALLOWANCE_BASIS
    if options.allowance is not None:
        allowance = _parsed(options.allowance, "allowance", _positive_relative)
        basis = "given with --allowance"
    sample_rates = _rates(options.fs, "--fs")
    if sample_rates:
        ratio = _parsed(
            options.mclk, "mclk", lambda text: parse_whole(text, minimum=1, maximum=4096)
        )
        targets += audio_targets(
            sample_rates, ratio=ratio, allowance=allowance, basis=basis, divisor=divisor
        )
    plain = _rates(options.rate, "--rate")
    targets += plain_targets(plain, allowance=allowance, basis=basis, divisor=divisor)
    if not targets:
        raise InputError("crystals", "no rates given; add --baud, --usb-full-speed, --fs or --rate")
    return tuple(targets)


def _oversampling(text: str) -> int:
    value = parse_whole(text, minimum=4, maximum=64)
    if value % 2:
        raise QuantityError(f"{value} is odd; receivers sample an even count")
    return value


def _positive_relative(text: str) -> Fraction:
    value = parse_relative(text)
    if value == 0:
        raise QuantityError(f"{text!r} allows nothing; give a positive allowance")
    return value


def _pll(options: CrystalsOptions) -> PllLimits:
    return PllLimits(
        reference_divider=_parsed(
            options.reference_divider, "reference_divider", parse_integer_choices
        ),
        multiplier=_parsed(options.multiplier, "multiplier", parse_integer_choices),
        vco=_parsed(options.vco, "vco", _rate_range),
        pfd=_parsed(options.pfd, "pfd", _rate_range),
    )


def _candidates(options: CrystalsOptions) -> tuple[Candidates, dict[str, Any]]:
    """Where to look, and a description of it for the report."""
    if options.range is not None:
        low, high = _parsed(options.range, "range", _rate_range)
        step = _parsed(options.step, "step", _rate)
        try:
            grid = frequency_grid(low, high, step)
        except QuantityError as error:
            raise InputError("--step" if low < high else "--range", str(error)) from None
        return grid, {"kind": "range"}
    if options.candidates is not None:
        return _parsed(options.candidates, "candidates", _rate_list), {"kind": "list"}
    return catalog_frequencies(), {"kind": "catalog"}


def _where_text(search: CrystalSearch, where: dict[str, Any]) -> str:
    count = _plural(search.candidate_count, "candidate")
    candidates = search.candidates
    if isinstance(candidates, FrequencyGrid):
        return (
            f"{count}, {format_hz(candidates.low)}..{format_hz(candidates.high)} "
            f"in {format_hz(candidates.step)} steps"
        )
    return f"{count} from the {'catalog' if where['kind'] == 'catalog' else 'list given'}"


def _structure_text(search: CrystalSearch) -> str:
    divisor = _choices_text(search.targets[0].counts, search.targets[0].counts_per_divisor)
    pll = search.pll
    if pll is None:
        return f"whole divisors {divisor} from the oscillator"
    return (
        f"PLL ÷{_choices_text(pll.reference_divider)} ×{_choices_text(pll.multiplier)}, "
        f"PFD {_range_text(pll.pfd)}, VCO {_range_text(pll.vco)}, then ÷{divisor} per rate"
    )


def _choices_text(choices: Divisors, per: int = 1) -> str:
    if isinstance(choices, range) and choices.step == 1:
        return f"{choices.start // per}..{(choices.stop - 1) // per}"
    values = sorted({value // per for value in choices})
    shown = ",".join(map(str, values[:8]))
    return shown + (",…" if len(values) > 8 else "")


def _range_text(bounds: tuple[Fraction, Fraction]) -> str:
    return f"{format_hz(bounds[0])}..{format_hz(bounds[1])}"


def _error_text(error: Fraction) -> str:
    return "0" if error == 0 else format_relative(error, signed=True)


def _divisor_text(result: RateResult) -> str:
    divisor = result.divisor
    if divisor.denominator == 1:
        return f"÷{divisor.numerator}"
    digits = result.target.counts_per_divisor.bit_length() - 1
    return f"÷{float(divisor):.{digits}f}".rstrip("0")


def _pll_text(candidate: Candidate) -> str:
    pll = candidate.pll
    if pll is None:
        return "-"
    return f"÷{pll.reference_divider} ×{pll.multiplier}\n{format_hz(pll.vco)}"


def _print_report(search: CrystalSearch, where: dict[str, Any], elapsed: float) -> None:
    console = Console(highlight=False)
    names = ", ".join(target.label for target in search.targets)
    console.print(f"Oscillators for {names}")
    parts = f"  structure: {_structure_text(search)}".split(", ")
    console.print(Phrases((listed(parts),), hanging=2))
    console.print(f"  searched: {_where_text(search, where)} ({elapsed:.2f} s)")
    console.print(_exact_summary(search))
    if search.without_setting:
        console.print(
            f"  no PLL setting takes {_plural(search.without_setting, 'candidate')} "
            "(PFD and VCO limits)"
        )
    if search.ranked:
        for table in _ranking_tables(search, console):
            console.print(table)
    else:
        console.print("  No candidate to rank.")
    console.print(_allowances_table(search))


def _plural(count: int, word: str) -> str:
    return f"{count:,} {word}{'' if count == 1 else 's'}".replace(",", " ")


def _exact_summary(search: CrystalSearch) -> Phrases:
    """How many are exact, and the number theory behind it, broken only between phrases."""
    multiple = search.exact_multiple
    count = _plural(search.exact_count, "candidate") if search.exact_count else "none"
    if search.pll is None:
        must = "an exact oscillator must be a multiple of"
        top = _largest_candidate(search.candidates)
    else:
        must = "an exact VCO must be a multiple of"
        top = search.pll.vco[1]
    phrases = [
        f"  exact for every rate: {count};",
        f" {must} {format_hz(multiple)}",
        " (the lcm of the divided clocks)",
    ]
    if multiple > top:
        phrases[-1] += ","
        phrases.append(f" above {format_hz(top)}")
    return Phrases((tuple(Text(phrase) for phrase in phrases),), hanging=2)


def _largest_candidate(candidates: Candidates) -> Fraction:
    if isinstance(candidates, FrequencyGrid):
        return candidates.high
    return max(candidates)


def _ranking_tables(search: CrystalSearch, console: Console) -> list[Table]:
    """The ranking in one table when the terminal is wide enough; else with the worst share
    and error stacked, and the rate columns spread over as many tables as the width needs
    (each repeating the rank and the oscillator), so that no number is folded or cut."""
    ranking = _Ranking.of(search)
    count = len(search.targets)
    whole = ranking.table(0, count, compact=False)
    if _width(console, whole) <= console.width:
        return [whole]
    # The simple box puts one column beside the next: widths add up, so each rate column is
    # measured once, alone.
    fixed = _width(console, ranking.table(0, 0, compact=True))
    columns = [
        _width(console, ranking.table(index, index + 1, compact=True)) - fixed
        for index in range(count)
    ]
    spans = _spans(columns, console.width - fixed)
    tables = len(spans)
    even = [(count * k // tables, count * (k + 1) // tables) for k in range(tables)]
    if all(sum(columns[first:last]) <= console.width - fixed for first, last in even):
        spans = even
    return [ranking.table(first, last, compact=True) for first, last in spans]


def _spans(columns: list[int], room: int) -> list[tuple[int, int]]:
    """The columns cut greedily into runs, each as long as ``room`` holds (at least one)."""
    spans: list[tuple[int, int]] = []
    first = 0
    while first < len(columns):
        last, used = first + 1, columns[first]
        while last < len(columns) and used + columns[last] <= room:
            used += columns[last]
            last += 1
        spans.append((first, last))
        first = last
    return spans


def _width(console: Console, table: Table) -> int:
    """How wide ``table`` wants to be, whatever the terminal's width."""
    return Measurement.get(console, console.options.update(width=10_000), table).maximum


@dataclass(frozen=True)
class _Ranking:
    """The ranking's cells, computed once, from which tables of any run of rates are cut."""

    search: CrystalSearch
    heads: tuple[tuple[str, str, str, str], ...]
    """Per candidate: its rank, oscillator, worst share and worst error."""
    loops: tuple[str, ...]
    """Per candidate: its PLL setting (empty without a PLL)."""
    rates: tuple[tuple[str, ...], ...]
    """Per candidate, per rate: its divisor over its error."""

    @classmethod
    def of(cls, search: CrystalSearch) -> _Ranking:
        heads, loops, rates = [], [], []
        for rank, candidate in enumerate(search.ranked, start=1):
            share = "exact" if candidate.exact else f"{float(candidate.worst_share) * 100:.2f} %"
            error = _error_text(candidate.worst.error)
            heads.append((str(rank), format_hz(candidate.frequency), share, error))
            loops.append(_pll_text(candidate) if search.pll is not None else "")
            rates.append(
                tuple(f"{_divisor_text(r)}\n{_error_text(r.error)}" for r in candidate.rates)
            )
        return cls(search, tuple(heads), tuple(loops), tuple(rates))

    def table(self, first: int, last: int, *, compact: bool) -> Table:
        """One row per oscillator with the rates ``first`` to ``last``. Compact, the worst
        share stands over the worst error in one column."""
        targets = self.search.targets
        count = len(targets)
        if (first, last) == (0, count):
            part = ""
        elif last == first + 1:
            part = f" (rate {last} of {count})"
        else:
            part = f" (rates {first + 1}–{last} of {count})"
        table = Table(box=box.SIMPLE, title=f"Ranked{part}", title_justify="left")
        table.add_column("#", justify="right")
        table.add_column("oscillator", justify="right", no_wrap=True)
        if compact:
            table.add_column("worst share\nworst error", justify="right")
        else:
            table.add_column("worst share", justify="right")
            table.add_column("worst error", justify="right")
        if self.search.pll is not None:
            table.add_column("PLL")
        for target in targets[first:last]:
            table.add_column(target.label.replace(" ", "\n", 1), justify="right")
        for (rank, frequency, share, error), loop, rates in zip(
            self.heads, self.loops, self.rates, strict=True
        ):
            cells = [rank, frequency, *([f"{share}\n{error}"] if compact else [share, error])]
            cells += [loop] if self.search.pll is not None else []
            table.add_row(*cells, *rates[first:last])
        return table


def _allowances_table(search: CrystalSearch) -> Table:
    table = Table(box=box.SIMPLE, title="Rates", title_justify="left")
    table.add_column("rate")
    table.add_column("divided clock", justify="right")
    table.add_column("allowance", justify="right")
    table.add_column("basis")
    for target in search.targets:
        table.add_row(
            target.label,
            format_hz(target.clock),
            f"±{format_relative(target.allowance)}",
            target.allowance_basis,
        )
    return table


def _rate_json(result: RateResult) -> dict[str, Any]:
    return {
        "label": result.target.label,
        "divisor": exact_string(result.divisor),
        "achieved_hz": exact_string(result.achieved),
        "error": exact_string(result.error),
        "error_ppm": float(result.error) * 1e6,
        "share": float(result.share),
    }


def _candidate_json(rank: int, candidate: Candidate) -> dict[str, Any]:
    pll = candidate.pll
    return {
        "rank": rank,
        "frequency_hz": exact_string(candidate.frequency),
        "exact": candidate.exact,
        "fits": candidate.fits,
        "worst_share": float(candidate.worst_share),
        "worst_share_exact": exact_string(candidate.worst_share),
        "worst_rate": candidate.worst.target.label,
        "worst_error_ppm": float(candidate.worst.error) * 1e6,
        "pll": None
        if pll is None
        else {
            "reference_divider": pll.reference_divider,
            "multiplier": pll.multiplier,
            "pfd_hz": exact_string(pll.pfd),
            "vco_hz": exact_string(pll.vco),
        },
        "rates": [_rate_json(result) for result in candidate.rates],
    }


def _as_json(search: CrystalSearch, where: dict[str, Any]) -> dict[str, Any]:
    candidates = search.candidates
    place: dict[str, Any] = {"kind": where["kind"], "count": search.candidate_count}
    if isinstance(candidates, FrequencyGrid):
        place |= {
            "low_hz": exact_string(candidates.low),
            "high_hz": exact_string(candidates.high),
            "step_hz": exact_string(candidates.step),
        }
    pll = search.pll
    structure: dict[str, Any] = {
        "kind": "integer-division" if pll is None else "pll",
        "divisor": _choices_text(search.targets[0].counts, search.targets[0].counts_per_divisor),
    }
    if pll is not None:
        structure |= {
            "reference_divider": _choices_text(pll.reference_divider),
            "multiplier": _choices_text(pll.multiplier),
            "pfd_hz": [exact_string(bound) for bound in pll.pfd],
            "vco_hz": [exact_string(bound) for bound in pll.vco],
        }
    return {
        "structure": structure,
        "candidates": place,
        "rates": [
            {
                "label": target.label,
                "kind": target.kind,
                "rate_hz": exact_string(target.rate),
                "divided_clock_hz": exact_string(target.clock),
                "allowance": exact_string(target.allowance),
                "allowance_ppm": float(target.allowance) * 1e6,
                "allowance_basis": target.allowance_basis,
            }
            for target in search.targets
        ],
        "exact_multiple_hz": exact_string(search.exact_multiple),
        "exact_count": search.exact_count,
        "without_pll_setting": search.without_setting,
        "ranked": [
            _candidate_json(rank, candidate)
            for rank, candidate in enumerate(search.ranked, start=1)
        ],
    }
