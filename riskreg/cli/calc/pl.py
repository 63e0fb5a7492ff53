"""calc pl, calc mttfd, calc channel-mttfd, calc dcavg, calc series, calc pfh, calc lambda-d.

Years, percentages, counts, PFHd and λD are bare numbers; the cycle time is a
TIME with its unit. ``calc series`` takes one --pfhd per subsystem, or one --pl
per subsystem (the count rule), or both for every subsystem, paired in order
(the PFHd sum, capped by the lowest PL); any other mix is refused.
"""

from __future__ import annotations

import click

from riskreg.engineering import pfh62061, pl
from riskreg.engineering.risk import PL_ORDER

from . import TIME, calc, emit, json_option, run

edition_option = click.option("--edition", default=None, help="Edition of the standard.")


@calc.command("pl")
@click.option("--category", required=True, type=click.Choice(list(pl.CATEGORIES)))
@click.option(
    "--mttfd",
    "mttfd",
    required=True,
    multiple=True,
    type=float,
    help="MTTFd of a channel in years; give it twice for two different channels.",
)
@click.option("--dcavg", required=True, type=float, help="DCavg in percent, 0-100.")
@click.option("--ccf", type=float, default=None, help="CCF score in points (Annex F).")
@click.option(
    "--well-tried", is_flag=True, help="Attest well-tried components and principles (Cat 1)."
)
@click.option(
    "--test-rate-ratio", type=float, default=None, help="Test rate / demand rate (Cat 2)."
)
@click.option(
    "--iec62061-estimate",
    type=float,
    default=None,
    help="A PFH (1/h) by IEC 62061 formulas, shown for information only.",
)
@edition_option
@json_option
def pl_command(
    category: str,
    mttfd: tuple[float, ...],
    dcavg: float,
    ccf: float | None,
    well_tried: bool,
    test_rate_ratio: float | None,
    iec62061_estimate: float | None,
    edition: str | None,
    as_json: bool,
) -> None:
    """Achieved PL by the ISO 13849-1 simplified procedure."""
    r = run(
        pl.achieved_pl,
        category,
        list(mttfd),
        dcavg,
        ccf_points=ccf,
        well_tried=well_tried,
        test_rate_ratio=test_rate_ratio,
        edition=edition,
        iec62061_estimate=iec62061_estimate,
    )
    emit(
        r,
        as_json,
        [
            ("PL", r.pl if r.pl else "not determined (see problems)"),
            ("Category", r.category),
            ("MTTFd of each channel (years)", r.mttfd_years),
            ("MTTFd band", r.mttfd_band),
            ("DCavg band", r.dcavg_band),
            ("PFHd (1/h)", r.pfhd),
            ("Simplified table alone", r.table_pl),
        ],
    )


@calc.command("mttfd")
@click.option("--b10d", type=float, default=None, help="B10d in cycles.")
@click.option(
    "--typical",
    type=click.Choice(list(pl.TYPICAL_B10D)),
    default=None,
    help="Use a typical B10d of ISO 13849-1 Table C.1 instead of --b10d.",
)
@click.option("--days-per-year", required=True, type=float, help="Operating days per year.")
@click.option("--hours-per-day", required=True, type=float, help="Operating hours per day.")
@click.option("--cycle-time", required=True, type=TIME, help="Mean time between operations.")
@edition_option
@json_option
def mttfd_command(
    b10d: float | None,
    typical: str | None,
    days_per_year: float,
    hours_per_day: float,
    cycle_time: float,
    edition: str | None,
    as_json: bool,
) -> None:
    """MTTFd and T10d of a wearing component from its B10d (ISO 13849-1 Annex C)."""
    r = run(
        pl.component_mttfd,
        b10d,
        days_per_year,
        hours_per_day,
        cycle_time,
        typical=typical,
        edition=edition,
    )
    emit(
        r,
        as_json,
        [
            ("nop (operations/year)", r.nop),
            ("MTTFd (years)", r.mttfd_years),
            ("T10d (years)", r.t10d_years),
        ],
    )


@calc.command("channel-mttfd")
@click.option(
    "--mttfd", "mttfd", required=True, multiple=True, type=float, help="Block MTTFd, years."
)
@edition_option
@json_option
def channel_mttfd_command(mttfd: tuple[float, ...], edition: str | None, as_json: bool) -> None:
    """MTTFd of one channel from its blocks: 1/MTTFd = Σ 1/MTTFd,i."""
    r = run(pl.channel_mttfd, list(mttfd), edition)
    emit(r, as_json, [("MTTFd of the channel (years)", r.mttfd_years)])


@calc.command("dcavg")
@click.option("--dc", "dc", required=True, multiple=True, type=float, help="DC of a block, %.")
@click.option(
    "--mttfd", "mttfd", required=True, multiple=True, type=float, help="MTTFd of that block, years."
)
@edition_option
@json_option
def dcavg_command(
    dc: tuple[float, ...], mttfd: tuple[float, ...], edition: str | None, as_json: bool
) -> None:
    """DCavg of blocks, paired in order: --dc 99 --mttfd 50 --dc 90 --mttfd 100."""
    if len(dc) != len(mttfd):
        raise click.UsageError(
            f"give one --mttfd per --dc, paired in order: {len(dc)} --dc but {len(mttfd)} --mttfd"
        )
    r = run(pl.dcavg, list(zip(dc, mttfd, strict=True)), edition)
    emit(r, as_json, [("DCavg (%)", r.dcavg_percent), ("DCavg band", r.dcavg_band)])


@calc.command("series")
@click.option("--pfhd", "pfhd", multiple=True, type=float, help="PFHd (1/h) of a subsystem.")
@click.option(
    "--pl", "pls", multiple=True, type=click.Choice(list(PL_ORDER)), help="PL of a subsystem."
)
@edition_option
@json_option
def series_command(
    pfhd: tuple[float, ...], pls: tuple[str, ...], edition: str | None, as_json: bool
) -> None:
    """Subsystems in series: by the sum of PFHd, or by the lowest-PL count."""
    if not pfhd and not pls:
        raise click.UsageError("give one --pfhd or one --pl per subsystem")
    if pfhd:
        if pls and len(pls) != len(pfhd):
            raise click.UsageError(
                "give --pfhd for every subsystem, and either no --pl or one --pl per --pfhd "
                f"in the same order; got {len(pfhd)} --pfhd and {len(pls)} --pl"
            )
        r = run(pl.series_pfhd, list(pfhd), list(pls) if pls else None, edition)
        emit(
            r,
            as_json,
            [("PFHd,total (1/h)", r.pfhd_total), ("PL", r.pl if r.pl else "none (see problems)")],
        )
        return
    c = run(pl.series_pl_count, list(pls), edition)
    emit(
        c,
        as_json,
        [
            ("PL", c.pl if c.pl else "not allowed (see problems)"),
            ("Lowest PL", c.lowest),
            ("Nlow", c.n_low),
        ],
    )


@calc.command("pfh")
@click.option(
    "--architecture", required=True, type=click.Choice(list(pfh62061.ARCHITECTURES)), help="A-D."
)
@click.option(
    "--lambda-d",
    "lambda_d",
    required=True,
    multiple=True,
    type=float,
    help="λD per hour: each element (A, C) or each channel (B, D; once for both alike).",
)
@click.option(
    "--dc", "dc", multiple=True, type=float, help="DC in % (C: per element; D: per channel)."
)
@click.option("--beta", type=float, default=None, help="Common-cause factor β, 0.01-0.1 (B, D).")
@click.option("--t1-hours", type=float, default=None, help="T1 proof-test interval or lifetime, h.")
@click.option("--t2-hours", type=float, default=None, help="T2 diagnostic test interval, h (D).")
@edition_option
@json_option
def pfh_command(
    architecture: str,
    lambda_d: tuple[float, ...],
    dc: tuple[float, ...],
    beta: float | None,
    t1_hours: float | None,
    t2_hours: float | None,
    edition: str | None,
    as_json: bool,
) -> None:
    """PFH of an IEC 62061 basic subsystem architecture and its SIL band."""
    r = run(
        pfh62061.subsystem_pfh,
        architecture,
        list(lambda_d),
        list(dc),
        beta=beta,
        t1_hours=t1_hours,
        t2_hours=t2_hours,
        edition=edition,
    )
    emit(
        r,
        as_json,
        [
            ("Architecture", r.architecture),
            ("PFH (1/h)", r.pfh),
            ("SIL band", f"SIL {r.sil_band}" if r.sil_band else "none"),
        ],
    )


@calc.command("lambda-d")
@click.option("--b10d", required=True, type=float, help="B10d in cycles.")
@click.option("--ops-per-hour", required=True, type=float, help="Operations per hour C.")
@click.option("--lifetime-hours", type=float, default=None, help="T1 lifetime, h (checks T10d).")
@edition_option
@json_option
def lambda_d_command(
    b10d: float,
    ops_per_hour: float,
    lifetime_hours: float | None,
    edition: str | None,
    as_json: bool,
) -> None:
    """λD = 0.1 · C / B10d (IEC 62061)."""
    r = run(pfh62061.lambda_from_b10d, b10d, ops_per_hour, lifetime_hours, edition)
    emit(r, as_json, [("λD (1/h)", r.lambda_d_per_h), ("T10d (h)", r.t10d_hours)])
