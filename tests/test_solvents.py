"""Tests for elucidate.spectrum.solvents.

Reference values: Fulmer et al., Organometallics 2010, 29, 2176, table of
13C solvent signals (from memory) unless stated otherwise beside a check.
"""

from __future__ import annotations

import pytest

from elucidate.errors import InputError
from elucidate.spectrum.peaks import parse_peaks
from elucidate.spectrum.solvents import (
    SOLVENT_LINES,
    remove_solvent_lines,
    resolve_solvent,
    solvent_from_label,
)

# (name, expected lines in ppm) -- source beside each row.
PUBLISHED = [
    ("cdcl3", (77.16,)),  # Fulmer et al., Organometallics 2010, 29, 2176, from memory
    ("acetone-d6", (29.84, 206.26)),  # Fulmer et al. 2010, from memory
    ("dmso-d6", (39.52,)),  # Fulmer et al. 2010, from memory
    ("cd3od", (49.00,)),  # Fulmer et al. 2010, from memory
    ("cd3cn", (1.32, 118.26)),  # Fulmer et al. 2010, from memory
    ("c6d6", (128.06,)),  # Fulmer et al. 2010, from memory
    ("cd2cl2", (53.84,)),  # Fulmer et al. 2010, from memory
    ("thf-d8", (25.31, 67.21)),  # Fulmer et al. 2010, from memory
    ("toluene-d8", (20.43, 125.13, 127.96, 128.87, 137.48)),  # Fulmer et al. 2010, from memory
    ("pyridine-d5", (123.87, 135.91, 150.35)),  # Fulmer et al. 2010, from memory
    ("chlorobenzene-d5", (125.96, 128.25, 129.26, 134.19)),  # Fulmer et al. 2010, from memory
    ("tfe-d3", (61.50, 126.28)),  # Fulmer et al. 2010, from memory
    ("d2o", ()),  # no carbon: trivially none
    ("ccl4", (96.1,)),  # not in Fulmer; commonly quoted value, from memory, no specific source
]


@pytest.mark.parametrize("name,lines", PUBLISHED)
def test_published_values(name, lines):
    assert sorted(SOLVENT_LINES[name]) == pytest.approx(sorted(lines), abs=0.005)


@pytest.mark.parametrize(
    "alias,canonical",
    [
        ("Chloroform-d", "cdcl3"),
        ("CDCl3", "cdcl3"),
        ("DMSO", "dmso-d6"),
        ("dmso_d6", "dmso-d6"),
        ("DMSO-d6", "dmso-d6"),
        ("Methanol-d4", "cd3od"),
        ("acetone", "acetone-d6"),
        ("C6D6", "c6d6"),
        ("benzene-d6", "c6d6"),
        ("THF-d8", "thf-d8"),
        ("thfd8", "thf-d8"),
        ("pyridine-d5", "pyridine-d5"),
        ("D2O", "d2o"),
        ("none", "none"),
    ],
)
def test_aliases(alias, canonical):
    assert resolve_solvent(alias) == canonical


def test_every_alias_maps_to_lines_of_its_canonical_name():
    from elucidate.spectrum.solvents import SOLVENT_ALIASES

    for alias, canon in SOLVENT_ALIASES.items():
        assert SOLVENT_LINES[alias] == SOLVENT_LINES[canon]


def test_unknown_solvent_lists_known_names():
    with pytest.raises(InputError) as exc:
        resolve_solvent("dmf-d7x")
    msg = str(exc.value)
    assert "unknown solvent 'dmf-d7x'" in msg and "cdcl3" in msg and "dmso-d6" in msg
    with pytest.raises(InputError, match="empty"):
        resolve_solvent("  ")


@pytest.mark.parametrize(
    "label,expected",
    [
        ("Chloroform-D1 (CDCl3)", "cdcl3"),
        ("Dimethylsulphoxide-D6 (DMSO-D6, C2D6SO)", "dmso-d6"),
        ("Methanol-D4 (CD3OD)", "cd3od"),
        ("Acetone-D6 ((CD3)2CO)", "acetone-d6"),
        ("Pyridin-D5 (C5D5N)", "pyridine-d5"),
        ("CDCL3,TMS", "cdcl3"),
        ("Chloroform-D1 (CDCl3) + Methanol-D4 (CD3OD)", None),  # mixture: unknown lines
        ("Unknown", None),
        (None, None),
    ],
)
def test_solvent_from_label(label, expected):
    # Label spellings as found in the open nmrshiftdb2 data (../shared/data).
    assert solvent_from_label(label) == expected


def test_remove_cdcl3_line():
    pl = parse_peaks("170.9 C, 77.2 ?, 60.4 CH2, 21.0 CH3, 14.2 CH3")
    out = remove_solvent_lines(pl, "CDCl3")
    assert out.shifts == (170.9, 60.4, 21.0, 14.2)
    assert len(out.warnings) == 1
    assert "77.2" in out.warnings[0] and "cdcl3" in out.warnings[0]


def test_remove_triplet_lines_and_keeps_order_and_warnings():
    # CDCl3 1:1:1 triplet, J(C,D) about 32 Hz (0.32 ppm at 100 MHz): common practice, no source.
    pl = parse_peaks("128.4 CH\n128.4 CH\n77.48\n77.16\n76.84\n30.0 CH2")
    assert len(pl.warnings) == 1  # the duplicate merge
    out = remove_solvent_lines(pl, "chloroform-d")
    assert out.shifts == (128.4, 30.0)
    assert len(out.warnings) == 2 and "3 line(s)" in out.warnings[1]


def test_tolerance_boundaries():
    pl = parse_peaks("39.0, 39.1, 40.0, 40.1")
    out = remove_solvent_lines(pl, "dmso-d6", tolerance=0.5)
    assert out.shifts == (39.0, 40.1)
    assert remove_solvent_lines(pl, "dmso-d6", tolerance=0.1).shifts == (39.0, 39.1, 40.0, 40.1)


def test_acetone_both_lines():
    out = remove_solvent_lines(parse_peaks("206.3 C, 206.0 C, 29.8 CH3, 31.0 CH3"), "acetone-d6", 0.2)
    assert out.shifts == (206.0, 31.0)


def test_nothing_removed_returns_same_list():
    pl = parse_peaks("128.4 CH, 30 CH2")
    assert remove_solvent_lines(pl, "none") is pl
    assert remove_solvent_lines(pl, "cdcl3") is pl


@pytest.mark.parametrize("name", ["D2O", "water", "Heavy Water", "deuterium oxide"])
def test_solvent_without_carbon_says_nothing_was_removed(name):
    # D2O holds no carbon, so it has no 13C line (trivially true, no source needed).
    pl = parse_peaks("128.4 CH, 30 CH2")
    out = remove_solvent_lines(pl, name)
    assert out.peaks == pl.peaks
    assert len(out.warnings) == 1 and "no 13C line was removed" in out.warnings[0]
    assert "d2o" in out.warnings[0]
    if name.lower() != "d2o":
        assert repr(name) in out.warnings[0]  # the name the user typed, and how it was read


@pytest.mark.parametrize("name", ["hexane", "DMF", "H2O-d", "wasser", "chloroform-d7", "acetone-d5"])
def test_unknown_solvents_are_errors(name):
    with pytest.raises(InputError) as exc:
        resolve_solvent(name)
    msg = str(exc.value)
    assert f"unknown solvent {name!r}" in msg and "cdcl3" in msg and "water = d2o" in msg


def test_bad_arguments():
    pl = parse_peaks("77.16")
    with pytest.raises(InputError, match="every peak"):
        remove_solvent_lines(pl, "cdcl3")
    for tol in (0, -1, 10, "0.5", True):
        with pytest.raises(InputError, match="tolerance"):
            remove_solvent_lines(parse_peaks("10"), "cdcl3", tol)
    with pytest.raises(InputError, match="unknown solvent"):
        remove_solvent_lines(parse_peaks("10"), "hexane-d14x")
    with pytest.raises(InputError, match="PeakList"):
        remove_solvent_lines([10.0], "cdcl3")


def test_multiplet_table_matches_line_table():
    from elucidate.spectrum.solvents import _CANONICAL, SOLVENT_MULTIPLETS

    assert set(SOLVENT_MULTIPLETS) == set(_CANONICAL)
    for name, lines in _CANONICAL.items():
        assert len(SOLVENT_MULTIPLETS[name]) == len(lines), name


def test_multiplet_lines():
    from elucidate.spectrum.solvents import multiplet_lines

    # CDCl3 triplet, J(C,D) about 32 Hz (chart value, from memory): +-0.32 ppm at 100 MHz.
    assert multiplet_lines("CDCl3", 100.0) == pytest.approx((76.84, 77.16, 77.48), abs=1e-3)
    # DMSO-d6 septet: 7 lines, outermost 3 J = 63 Hz from the centre.
    lines = multiplet_lines("dmso-d6", 100.0)
    assert len(lines) == 7 and lines[0] == pytest.approx(39.52 - 0.63, abs=1e-3)
    assert multiplet_lines("d2o", 100.0) == ()
    with pytest.raises(InputError, match="observe frequency"):
        multiplet_lines("cdcl3", 0)


def test_multiplet_removal_only_with_frequency():
    pl = parse_peaks("40.15 ?, 55.0 CH3")
    assert remove_solvent_lines(pl, "dmso-d6") is pl  # 0.63 ppm from the centre
    out = remove_solvent_lines(pl, "dmso-d6", observe_mhz=100.0)
    assert out.shifts == (55.0,)


def test_cli_water_is_d2o_and_the_output_says_nothing_was_removed():
    # Ethyl acetate, shifts from Fulmer et al. 2010 (from memory); 'water' = D2O, no carbon.
    from click.testing import CliRunner

    from elucidate.cli import main

    res = CliRunner().invoke(main, ["solve", "--formula", "C4H8O2", "--peaks", "171.1 C, 60.5 CH2, 21.0 CH3, "
                                    "14.2 CH3", "--solvent", "water", "--time-limit", "5", "--top", "1"])
    assert res.exit_code == 0, res.output
    assert "solvent 'water' (read as d2o) has no carbon, so no 13C line was removed" in res.stdout
