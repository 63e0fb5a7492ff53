"""Guard openings against 29 CFR 1910.217 Table O-10.

Expected values: 29 CFR 1910.217 Table O-10 [reg, from memory], distance of the
opening from the point-of-operation hazard (in) → maximum width of opening (in).
Band edges go to the row with the smaller opening (the module's stated reading).
"""

from __future__ import annotations

import pytest

from riskreg.engineering import cautions, openings
from riskreg.engineering.derivation import InputError

# (row, a distance inside the band, max opening) — 1910.217 Table O-10 [reg, from memory]
O10_INSIDE = [
    (1, 1.0, 0.25),  # 1/2 to 1 1/2 in → 1/4 in
    (2, 2.0, 0.375),  # 1 1/2 to 2 1/2 in → 3/8 in
    (3, 3.0, 0.5),  # 2 1/2 to 3 1/2 in → 1/2 in
    (4, 4.5, 0.625),  # 3 1/2 to 5 1/2 in → 5/8 in
    (5, 6.0, 0.75),  # 5 1/2 to 6 1/2 in → 3/4 in
    (6, 7.0, 0.875),  # 6 1/2 to 7 1/2 in → 7/8 in
    (7, 10.0, 1.25),  # 7 1/2 to 12 1/2 in → 1 1/4 in
    (8, 14.0, 1.5),  # 12 1/2 to 15 1/2 in → 1 1/2 in
    (9, 16.5, 1.875),  # 15 1/2 to 17 1/2 in → 1 7/8 in
    (10, 25.0, 2.125),  # 17 1/2 to 31 1/2 in → 2 1/8 in
]


@pytest.mark.parametrize(("row", "distance", "max_opening"), O10_INSIDE)
def test_every_table_o10_row(row: int, distance: float, max_opening: float) -> None:
    r = openings.guard_opening_us(distance, max_opening)
    assert r.row == row
    assert r.max_opening_in == pytest.approx(max_opening)
    assert r.max_opening_mm == pytest.approx(max_opening * 25.4)
    assert r.ok is True  # an opening equal to the maximum is allowed ("maximum width")
    wider = openings.guard_opening_us(distance, max_opening + 0.01)
    assert wider.ok is False
    assert wider.derivation.problems


# Edges: the upper edge of each row (except the last) is also the lower edge of the
# next; the row with the smaller opening is used. 1910.217 Table O-10 [reg, from memory]
EDGES = [
    (0.5, 1, 0.25),
    (1.5, 1, 0.25),
    (2.5, 2, 0.375),
    (3.5, 3, 0.5),
    (5.5, 4, 0.625),
    (6.5, 5, 0.75),
    (7.5, 6, 0.875),
    (12.5, 7, 1.25),
    (15.5, 8, 1.5),
    (17.5, 9, 1.875),
    (31.5, 10, 2.125),
]


@pytest.mark.parametrize(("distance", "row", "max_opening"), EDGES)
def test_band_edges_take_the_smaller_opening(distance: float, row: int, max_opening: float) -> None:
    r = openings.guard_opening_us(distance, 0.1)
    assert (r.row, r.max_opening_in) == (row, pytest.approx(max_opening))


def test_edge_is_explained() -> None:
    r = openings.guard_opening_us(1.5, 0.25)
    assert any("edge between rows 1 and 2" in s for s in r.derivation.steps)


def test_just_past_an_edge_takes_the_next_row() -> None:
    # 1.51 in is inside 1 1/2 to 2 1/2 → 3/8 in  # Table O-10 [reg, from memory]
    assert openings.guard_opening_us(1.51, 0.3).max_opening_in == pytest.approx(0.375)


@pytest.mark.parametrize("distance", [0.0, 0.25, 0.49, 31.51, 40.0])
def test_outside_the_table_is_not_judged(distance: float) -> None:
    r = openings.guard_opening_us(distance, 0.1)
    assert r.ok is None
    assert r.max_opening_in is None and r.row is None
    assert any("outside Table O-10" in p for p in r.derivation.problems)


def test_mm_entry_converts() -> None:
    # 38.1 mm = 1.5 in (edge, row 1, 1/4 in = 6.35 mm); 6.35 mm opening passes
    r = openings.guard_opening_us_mm(38.1, 6.35)
    assert r.row == 1 and r.ok is True
    assert r.distance_in == pytest.approx(1.5)
    # 100 mm = 3.937 in → 3 1/2 to 5 1/2 in → 5/8 in = 15.875 mm; 16 mm is too wide
    r = openings.guard_opening_us_mm(100.0, 16.0)
    assert r.row == 4 and r.ok is False
    assert r.max_opening_mm == pytest.approx(15.875)
    assert r.derivation.inputs[0].unit == "mm"


@pytest.mark.parametrize(
    ("args", "field"),
    [((-1.0, 0.25), "distance_in"), ((2.0, 0.0), "opening_in"), ((2.0, -0.1), "opening_in")],
)
def test_bad_inputs_are_refused(args: tuple[float, float], field: str) -> None:
    with pytest.raises(InputError) as exc:
        openings.guard_opening_us(*args)
    assert exc.value.field == field


def test_bad_mm_inputs_are_refused() -> None:
    with pytest.raises(InputError) as exc:
        openings.guard_opening_us_mm(-5.0, 6.0)
    assert exc.value.field == "distance_mm"
    with pytest.raises(InputError) as exc:
        openings.guard_opening_us_mm(50.0, float("nan"))
    assert exc.value.field == "opening_mm"


def test_result_keys_cautions_and_citation() -> None:
    r = openings.guard_opening_us(4.0, 0.5)
    d = r.to_dict()
    assert d["max_opening_in"] == pytest.approx(0.625) and d["ok"] is True and d["row"] == 4
    assert r.derivation.cautions == cautions.REQUIREMENT
    assert r.derivation.constants[0].citation == "29 CFR 1910.217:current (c)(2)(vi), Table O-10"
    assert any("(a)(5)" in w for w in r.derivation.warnings)


def test_unknown_edition_is_refused() -> None:
    with pytest.raises(InputError, match="edition"):
        openings.guard_opening_us(4.0, 0.5, edition="1980")
