"""Tests for JCAMP-DX reading, the writer, peak picking and DEPT editing.

Sources: the ASDF compression tables (SQZ @A-I/a-i, DIF %J-R/j-r, DUP S-Z,s,
Y-value check in DIF form) are those of the JCAMP-DX standard, McDonald &
Wilks, Appl. Spectrosc. 1988, 42, 151 (from memory); the hand-decoded lines
below were worked out by hand from those tables.  DEPT sign rules: common
practice, no source.
"""

from __future__ import annotations

import numpy as np
import pytest

from elucidate.errors import InputError
from elucidate.spectrum.jcamp import (
    JcampSpectrum,
    PickSettings,
    decode_xydata_lines,
    parse_jcamp,
    peaks_from_jcamp,
    pick_peaks,
    read_jcamp,
    read_jcamp_blocks,
)
from elucidate.spectrum.jcamp_write import (
    FORMS,
    encode_xydata,
    format_jcamp_peak_table,
    format_jcamp_spectrum,
)
from elucidate.spectrum.peaks import read_peaks
from elucidate.spectrum.solvents import remove_solvent_lines
from elucidate.spectrum.synthetic import dept_heights, lorentzian_spectrum

# --------------------------------------------------------------------------
# hand-decoded ASDF lines (McDonald & Wilks 1988 tables, decoded by hand)


@pytest.mark.parametrize(
    "lines,expected",
    [
        (["0 1 2 3"], [1, 2, 3]),  # AFFN
        (["0 1,2,3"], [1, 2, 3]),  # AFFN, commas
        (["0+1-2+3"], [1, -2, 3]),  # PAC
        (["0 1.5E+02 -2.5e-01"], [150.0, -0.25]),  # AFFN with exponents
        (["0ABC@a"], [1, 2, 3, 0, -1]),  # SQZ
        (["0A23J12"], [123, 235]),  # multi-digit SQZ and DIF
        (["0E0j5"], [50, 35]),  # negative DIF
        (["0AJJj"], [1, 2, 3, 2]),  # DIF
        (["0AT"], [1, 1]),  # DUP of an SQZ value: T = 2 in all
        (["0AJT"], [1, 2, 3]),  # DUP of a difference
        (["0A%U"], [1, 1, 1, 1]),  # zero difference, U = 3
        (["0AS0"], [1] * 10),  # multi-digit DUP: S0 = 10
        (["10A00E"], [100, 5]),  # abscissa 10 then SQZ, E without sign is SQZ 5
        (["0AJJ", "3CJ"], [1, 2, 3, 4]),  # Y-value check at the start of line 2
        (["0AJJ", "3C"], [1, 2, 3]),  # closing check line adds nothing
        (["0AB", "2C"], [1, 2, 3]),  # no DIF at the end: no check
    ],
)
def test_hand_decoded_lines(lines, expected):
    decoded = decode_xydata_lines(lines)
    ys = [y for _, line_ys, _ in decoded for y in line_ys]
    assert ys == pytest.approx(expected)


def test_y_check_mismatch_is_an_error():
    with pytest.raises(InputError, match="Y-value check failed"):
        decode_xydata_lines(["0AJJ", "3DJ"])


@pytest.mark.parametrize(
    "line,fragment",
    [("0A?", "unknown value '?'"), ("0A#", "unexpected character '#'"), ("0J", "without an ordinate"), ("0 S", "nothing to repeat")],
)
def test_bad_data_lines(line, fragment):
    with pytest.raises(InputError, match=fragment.replace("?", r"\?")):
        decode_xydata_lines([line])


# --------------------------------------------------------------------------
# round trips through the writer, every form


def _spectrum(npoints=4096, seed=1, noise=0.2):
    lines = [(200.0, 40.0), (120.5, 80.0), (60.0, 100.0), (10.0, 25.0)]
    return lorentzian_spectrum(lines, first_ppm=220, last_ppm=-5, npoints=npoints, width_hz=8, noise=noise, seed=seed)


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("units", ["PPM", "HZ"])
def test_roundtrip_every_form(form, units):
    x, y = _spectrum()
    text = format_jcamp_spectrum(x, y, form=form, x_units=units, observe_mhz=125.7)
    assert all(len(line) <= 80 for line in text.splitlines())
    spec = parse_jcamp(text)[0]
    assert spec.npoints == x.size
    assert spec.observe_mhz == pytest.approx(125.7)
    assert spec.x == pytest.approx(x, abs=1e-6)
    yfactor = float(np.max(np.abs(y))) / 1e6
    assert np.max(np.abs(spec.y - y)) <= yfactor * 0.5 + 1e-12
    assert spec.warnings == ()


def test_compressed_forms_are_compressed():
    x, y = _spectrum(noise=0.0)
    sizes = {f: len(format_jcamp_spectrum(x, y, form=f)) for f in FORMS}
    assert sizes["SQZ"] < sizes["PAC"] <= sizes["AFFN"]
    assert sizes["DIFDUP"] < sizes["DIF"]  # noiseless tails repeat differences
    assert sizes["SQZDUP"] <= sizes["SQZ"]


def test_encode_rejects_unknown_form():
    with pytest.raises(InputError, match="unknown JCAMP-DX ordinate form"):
        encode_xydata([0.0], [1], "ZIP")


def test_xfactor_yfactor_and_increasing_axis():
    text = """##TITLE=factors
##JCAMP-DX=4.24
##DATA TYPE=NMR SPECTRUM
##XUNITS=PPM
##FIRSTX=0
##LASTX=5
##XFACTOR=0.5
##YFACTOR=2
##NPOINTS=6
##XYDATA=(X++(Y..Y))
0 1 2 3 $$ comment
6 4 5 6
##END=
"""
    spec = parse_jcamp(text)[0]
    assert list(spec.x) == pytest.approx([0, 1, 2, 3, 4, 5])
    assert list(spec.y) == pytest.approx([2, 4, 6, 8, 10, 12])
    assert spec.warnings == ()


def test_x_check_mismatch_gives_warning():
    text = "##TITLE=t\n##FIRSTX=0\n##LASTX=5\n##NPOINTS=6\n##XYDATA=(X++(Y..Y))\n0 1 2 3\n40 4 5 6\n##END=\n"
    spec = parse_jcamp(text)[0]
    assert any("X check" in w for w in spec.warnings)


def test_deltax_instead_of_lastx():
    text = "##TITLE=t\n##FIRSTX=10\n##DELTAX=-2\n##NPOINTS=3\n##XYDATA=(X++(Y..Y))\n10 1 2 3\n##END=\n"
    assert list(parse_jcamp(text)[0].x) == [10, 8, 6]


def test_labels_are_normalised():
    text = "##title=t\n##First_X=1\n##last x=0\n##N-POINTS=2\n##XY DATA=(X++(Y..Y))\n1 5 6\n##END=\n"
    spec = parse_jcamp(text)[0]
    assert list(spec.y) == [5, 6]


# --------------------------------------------------------------------------
# peak tables


def test_peak_table_ppm_and_hz(tmp_path):
    shifts = [170.9, 128.5, 60.4, 14.2]
    for units in ("PPM", "HZ"):
        f = tmp_path / f"t_{units}.jdx"
        f.write_text(format_jcamp_peak_table(shifts, [3, 10, 8, 9], x_units=units, observe_mhz=100.6))
        spec = read_jcamp(f)
        assert spec.is_peak_table
        assert list(spec.x) == pytest.approx(shifts, abs=1e-3)
        pl = read_peaks(str(f))
        assert [p.shift for p in pl.peaks] == pytest.approx(shifts, abs=1e-3)
        assert all(p.hydrogens is None for p in pl.peaks)
        assert pl.provenance and "peak table" in pl.provenance[0]


def test_peak_table_layouts():
    text = "##TITLE=p\n##PEAK TABLE=(XY..XY)\n10.5,1 20.5,2; 30.5,3\n40.5, 4\n##END=\n"
    spec = parse_jcamp(text)[0]
    assert list(spec.x) == [10.5, 20.5, 30.5, 40.5]
    text = "##TITLE=p\n##PEAK TABLE=(XYW..XYW)\n10.5,1,0.2 20.5,2,0.3\n##END=\n"
    assert list(parse_jcamp(text)[0].x) == [10.5, 20.5]


def test_ntuples_real_page(tmp_path):
    """NTUPLES layout (McDonald & Wilks 1988 / Davies & Lampen 1993, from memory): real page read."""
    x, y = _spectrum(npoints=2048)
    mhz = 100.6
    xf = x * mhz
    yfac = float(np.max(np.abs(y))) / 1e6
    real = np.rint(y / yfac).astype(int)
    imag = np.rint(np.roll(y, 7) / yfac).astype(int)
    head = [
        "##TITLE=ntuples test", "##JCAMP-DX=5.00", "##DATA TYPE=NMR SPECTRUM", "##.OBSERVE FREQUENCY=100.6",
        "##.OBSERVE NUCLEUS=^13C", "##NTUPLES=NMR SPECTRUM",
        "##VAR_NAME=FREQUENCY, SPECTRUM/REAL, SPECTRUM/IMAG, PAGE NUMBER",
        "##SYMBOL=X, R, I, N", "##VAR_TYPE=INDEPENDENT, DEPENDENT, DEPENDENT, PAGE",
        "##VAR_FORM=AFFN, ASDF, ASDF, AFFN", f"##VAR_DIM={x.size}, {x.size}, {x.size}, 2",
        "##UNITS=HZ, ARBITRARY UNITS, ARBITRARY UNITS,", f"##FIRST={xf[0]:.6f}, 0, 0, 1",
        f"##LAST={xf[-1]:.6f}, 0, 0, 2", f"##FACTOR=1, {yfac:.10g}, {yfac:.10g}, 1",
        "##PAGE=N=1", "##DATA TABLE=(X++(R..R)), XYDATA $$ real",
    ]
    body = head + encode_xydata(list(xf), list(real), "DIFDUP")
    body += ["##PAGE=N=2", "##DATA TABLE=(X++(I..I)), XYDATA"] + encode_xydata(list(xf), list(imag), "DIFDUP")
    body += ["##END NTUPLES=NMR SPECTRUM", "##END="]
    f = tmp_path / "nt.jdx"
    f.write_text("\n".join(body) + "\n")
    spec = read_jcamp(f)
    assert spec.x == pytest.approx(x, abs=1e-5)
    assert np.max(np.abs(spec.y - y)) <= yfac
    assert pick_peaks(spec).shifts == pytest.approx([200.0, 120.5, 60.0, 10.0], abs=0.05)


def test_compound_file_blocks(tmp_path):
    x, y = _spectrum(npoints=512)
    text = (
        "##TITLE=link\n##JCAMP-DX=5.01\n##BLOCKS=2\n"
        + format_jcamp_spectrum(x, y, title="c13")
        + format_jcamp_peak_table([128.0], title="peaks")
        + "##END=\n"
    )
    f = tmp_path / "compound.jdx"
    f.write_text(text)
    blocks = read_jcamp_blocks(f)
    assert [b.title for b in blocks] == ["c13", "peaks"]
    assert read_jcamp(f).title == "c13"


# --------------------------------------------------------------------------
# malformed files


BAD_FILES = [
    ("hello\n", "not a JCAMP-DX file"),
    ("##TITLE=x\n##END=\n", "no ##XYDATA"),
    ("##TITLE=x\n##XUNITS=HZ\n##FIRSTX=1\n##LASTX=0\n##NPOINTS=2\n##XYDATA=(X++(Y..Y))\n1 1 2\n##END=\n", "no ##.OBSERVE FREQUENCY"),
    ("##TITLE=x\n##XUNITS=1/CM\n##FIRSTX=1\n##LASTX=0\n##NPOINTS=2\n##XYDATA=(X++(Y..Y))\n1 1 2\n##END=\n", "XUNITS=1/CM is not supported"),
    ("##TITLE=x\n##.OBSERVE NUCLEUS=^1H\n##PEAK TABLE=(XY..XY)\n1,1\n##END=\n", "not 13C"),
    ("##TITLE=x\n##FIRSTX=1\n##LASTX=0\n##NPOINTS=5\n##XYDATA=(X++(Y..Y))\n1 1 2\n##END=\n", "holds 2 points but ##NPOINTS=5"),
    ("##TITLE=x\n##FIRSTX=a\n##LASTX=0\n##NPOINTS=2\n##XYDATA=(X++(Y..Y))\n1 1 2\n##END=\n", "##FIRSTX='a' is not a number"),
    ("##TITLE=x\n##LASTX=0\n##NPOINTS=2\n##XYDATA=(X++(Y..Y))\n1 1 2\n##END=\n", "needs ##FIRSTX, ##LASTX and ##NPOINTS"),
    ("##TITLE=x\n##FIRSTX=1\n##LASTX=0\n##NPOINTS=2.5\n##XYDATA=(X++(Y..Y))\n1 1 2\n##END=\n", "must be an integer"),
    ("##TITLE=x\n##FIRSTX=1\n##LASTX=0\n##NPOINTS=2\n##XYDATA=(XY..XY)\n1 1 2\n##END=\n", "XYDATA=(XY..XY) is not supported"),
    ("##TITLE=x\n##PEAK TABLE=(XY..XY)\n1,1 2\n##END=\n", "not a multiple of 2"),
    ("##TITLE=x\n##PEAK TABLE=(XY..XY)\n1,a\n##END=\n", "'a', which is not a number"),
    ("##TITLE=x\n##NTUPLES=NMR SPECTRUM\n##END NTUPLES=\n##END=\n", "NTUPLES block without a real page"),
]


@pytest.mark.parametrize("text,fragment", BAD_FILES)
def test_bad_files(tmp_path, text, fragment):
    f = tmp_path / "bad.jdx"
    f.write_text(text)
    with pytest.raises(InputError) as exc:
        read_jcamp(f)
    assert fragment in str(exc.value)
    with pytest.raises(InputError):
        read_peaks(str(f))


def test_missing_and_directory(tmp_path):
    with pytest.raises(InputError, match="not found"):
        read_jcamp(tmp_path / "none.jdx")
    with pytest.raises(InputError, match="directory"):
        read_jcamp(tmp_path)
    with pytest.raises(InputError, match="DEPT-135 spectrum: JCAMP-DX file .* not found"):
        x, y = _spectrum(npoints=512)
        f = tmp_path / "c.jdx"
        f.write_text(format_jcamp_spectrum(x, y))
        peaks_from_jcamp(f, tmp_path / "d135.jdx")


def test_jcamp_content_recognised_without_extension(tmp_path):
    f = tmp_path / "spectrum.txt"
    f.write_text(format_jcamp_peak_table([77.0, 20.0]))
    assert read_peaks(str(f)).shifts == (77.0, 20.0)


# --------------------------------------------------------------------------
# peak picking on synthetic Lorentzian spectra


KNOWN = [206.9, 170.2, 155.3, 131.0, 128.7, 128.4, 77.16, 64.5, 45.2, 29.9, 22.6, 14.1, -3.6]


@pytest.mark.parametrize("seed,form,units", [(0, "DIFDUP", "PPM"), (1, "SQZ", "HZ"), (2, "PAC", "PPM"), (3, "AFFN", "HZ")])
def test_picked_peaks_match_known_list(tmp_path, seed, form, units):
    """Lines of a synthetic spectrum (noise, sloping baseline) are all found within 0.1 ppm."""
    rng = np.random.default_rng(seed)
    heights = rng.uniform(15, 100, len(KNOWN))
    x, y = lorentzian_spectrum(
        list(zip(KNOWN, heights)), npoints=32768, width_hz=2.0, noise=1.0, seed=seed, baseline=(5.0, 0.03)
    )
    f = tmp_path / "c13.jdx"
    f.write_text(format_jcamp_spectrum(x, y, form=form, x_units=units))
    picked = pick_peaks(read_jcamp(f))
    assert len(picked.shifts) == len(KNOWN)
    for got, want in zip(picked.shifts, sorted(KNOWN, reverse=True)):
        assert abs(got - want) < 0.1
    assert picked.noise == pytest.approx(1.0, rel=0.2)
    assert "minimum separation" in picked.describe()


def test_min_separation_and_threshold_settings():
    x, y = lorentzian_spectrum([(100.0, 50), (100.06, 40), (50.0, 3)], npoints=65536, width_hz=1.0, noise=0.1)
    spec = JcampSpectrum("t", "", None, 100.6, x, y)
    assert len(pick_peaks(spec).shifts) == 3
    assert pick_peaks(spec, PickSettings(min_separation_ppm=0.1)).shifts == pytest.approx([100.0, 50.0], abs=0.01)
    assert len(pick_peaks(spec, PickSettings(min_relative_height=0.1)).shifts) == 2  # 3/50 < 0.1


def test_spectrum_object_validation():
    spec = JcampSpectrum("t", "", None, None, [3.0, 2.0, 1.0], [0, 1, 0])
    assert spec.npoints == 3 and not spec.x.flags.writeable
    with pytest.raises(InputError, match="equal length"):
        JcampSpectrum("t", "", None, None, [1.0, 2.0], [1.0])
    with pytest.raises(InputError, match="finite"):
        JcampSpectrum("t", "", None, None, [1.0, float("nan")], [1.0, 2.0])
    with pytest.raises(InputError, match="too few"):
        pick_peaks(spec)


def test_normal_tail_quantile():
    from elucidate.spectrum.picking import _normal_quantile_upper

    # Standard normal table (common knowledge, from memory): P(Z>2)=0.02275, P(Z>3)=0.00135.
    assert _normal_quantile_upper(0.02275) == pytest.approx(2.0, abs=1e-3)
    assert _normal_quantile_upper(0.00135) == pytest.approx(3.0, abs=2e-3)


def test_threshold_rises_with_spectrum_size():
    for n, lo, hi in ((4096, 5.0, 5.1), (262144, 5.6, 5.9)):
        x, y = lorentzian_spectrum([(100.0, 50)], npoints=n, noise=1.0, width_hz=20)
        picked = pick_peaks(JcampSpectrum("t", "", None, 100.6, x, y))
        assert lo <= picked.k <= hi and "x noise" in picked.describe()


def test_noiseless_spectrum():
    x, y = lorentzian_spectrum([(150.0, 10), (20.0, 10)], npoints=8192, width_hz=4.0)
    spec = JcampSpectrum("t", "", None, 100.6, x, y)
    assert pick_peaks(spec).shifts == pytest.approx([150.0, 20.0], abs=0.02)


@pytest.mark.parametrize(
    "kwargs",
    [{"snr": -1}, {"min_relative_height": 2}, {"min_separation_ppm": "a"}, {"baseline_segments": 0}, {"ppm_range": (5, 1)}, {"snr": float("nan")}],
)
def test_bad_settings(kwargs):
    with pytest.raises(InputError, match="peak picking setting"):
        PickSettings(**kwargs)


# --------------------------------------------------------------------------
# DEPT editing


CARBONS = [(170.9, 0), (140.1, 0), (131.2, 1), (128.5, 1), (60.4, 2), (35.3, 2), (21.0, 3), (14.2, 3)]


def _write(path, lines, seed):
    x, y = lorentzian_spectrum(lines, npoints=32768, width_hz=2.0, noise=0.3, seed=seed)
    path.write_text(format_jcamp_spectrum(x, y, form="DIFDUP", observe_mhz=100.6))
    return path


@pytest.fixture
def dept_files(tmp_path):
    c13 = _write(tmp_path / "c13.jdx", [(s, 40) for s, _ in CARBONS] + [(77.16, 30), (77.48, 30), (76.84, 30)], 1)
    d135 = _write(tmp_path / "dept135.jdx", [(s, 40 * dept_heights(h, 135)) for s, h in CARBONS if h], 2)
    # An imperfect DEPT-90: small CH3 residues (5 %) must not become CH.
    d90 = _write(
        tmp_path / "dept90.jdx",
        [(s, 40 * dept_heights(h, 90) + (2.0 if h == 3 else 0.0)) for s, h in CARBONS if h],
        3,
    )
    return c13, d135, d90


def test_dept_heights_textbook():
    # Textbook DEPT transfer (common practice, no source): sin(theta), sin(2 theta), ...
    assert dept_heights(1, 90) == pytest.approx(1.0)
    assert dept_heights(2, 90) == pytest.approx(0.0, abs=1e-12)
    assert dept_heights(3, 90) == pytest.approx(0.0, abs=1e-12)
    assert dept_heights(2, 135) == pytest.approx(-1.0)
    assert dept_heights(3, 135) > 0 and dept_heights(1, 135) > 0


def test_dept_135_and_90(dept_files):
    c13, d135, d90 = dept_files
    pl = peaks_from_jcamp(c13, d135, d90)
    got = {round(p.shift, 1): p.multiplicity for p in pl.peaks}
    for s, h in CARBONS:
        assert got[round(s, 1)] == ["C", "CH", "CH2", "CH3"][h]
    assert got[77.2] == "C"  # solvent lines show no DEPT signal
    assert len(pl.provenance) == 3 and pl.observe_mhz == pytest.approx(100.6)
    # The C-D triplet goes with the solvent removal, outer lines included.
    clean = remove_solvent_lines(pl, "cdcl3", tolerance=0.2)
    assert clean.n_lines == len(CARBONS)
    assert clean.provenance == pl.provenance
    assert all(p.count is None for p in pl.peaks)


def test_dept_135_only(dept_files):
    c13, d135, _ = dept_files
    pl = peaks_from_jcamp(c13, dept135_path=d135)
    got = {round(p.shift, 1): p.multiplicity for p in pl.peaks}
    assert got[60.4] == "CH2" and got[170.9] == "C" and got[131.2] == "?" and got[14.2] == "?"
    assert any("without DEPT-90" in w for w in pl.warnings)


def test_dept_90_only(dept_files):
    c13, _, d90 = dept_files
    pl = peaks_from_jcamp(c13, dept90_path=d90)
    got = {round(p.shift, 1): p.multiplicity for p in pl.peaks}
    assert got[131.2] == "CH" and got[60.4] == "?" and got[170.9] == "?"


def test_dept_peak_tables(tmp_path):
    c13 = tmp_path / "c.jdx"
    c13.write_text(format_jcamp_peak_table([s for s, _ in CARBONS]))
    d135 = tmp_path / "d135.jdx"
    d135.write_text(format_jcamp_peak_table([s for s, h in CARBONS if h], [dept_heights(h, 135) for s, h in CARBONS if h]))
    d90 = tmp_path / "d90.jdx"
    d90.write_text(format_jcamp_peak_table([131.2, 128.5, 99.0], [1, 1, 1]))
    pl = peaks_from_jcamp(c13, d135, d90)
    assert [p.hydrogens for p in pl.peaks] == [h for _, h in CARBONS]
    assert any("99.00" in w for w in pl.warnings)  # unmatched DEPT-90 line reported


def test_dmso_septet_removed_with_observe_frequency():
    # DMSO-d6 septet, J(C,D) about 21 Hz, centre 39.52 ppm (Fulmer et al. 2010, from memory).
    mhz = 75.5
    septet = [(39.52 + k * 21.0 / mhz, [1, 3, 6, 7, 6, 3, 1][k + 3] * 10) for k in range(-3, 4)]
    x, y = lorentzian_spectrum(septet + [(55.0, 50), (21.0, 50)], npoints=32768, width_hz=2.0, noise=0.2, observe_mhz=mhz)
    spec = JcampSpectrum("t", "", "^13C", mhz, x, y, source="mem")
    pl = peaks_from_jcamp(spec)
    assert pl.n_lines == 9
    clean = remove_solvent_lines(pl, "dmso-d6")
    assert clean.shifts == pytest.approx((55.0, 21.0), abs=0.02)
    # Without the frequency only the centre window applies.
    assert remove_solvent_lines(pl, "dmso-d6", observe_mhz=None).n_lines < 9


def test_read_peaks_with_dept_and_demo_set(tmp_path):
    """The demo writer's files go through read_peaks with both DEPT spectra."""
    from elucidate.spectrum.synthetic import write_demo_spectra

    carbons = [(166.8, 0), (133.0, 1), (130.5, 0), (129.6, 1), (129.6, 1), (128.4, 1), (128.4, 1), (61.0, 2), (14.3, 3)]
    paths = write_demo_spectra(carbons, tmp_path, stem="qc-demo", solvent="cdcl3", npoints=32768)
    pl = read_peaks(str(paths["c13"]), dept135=str(paths["dept135"]), dept90=str(paths["dept90"]))
    pl = remove_solvent_lines(pl, "cdcl3")
    assert [(p.shift, p.multiplicity) for p in pl.peaks] == [
        (166.8, "C"), (133.0, "CH"), (130.5, "C"), (129.6, "CH"), (128.4, "CH"), (61.0, "CH2"), (14.3, "CH3")
    ]
    text = paths["c13"].read_text()
    assert "synthetic" in text and "##XYDATA=(X++(Y..Y))" in text


def test_dept_needs_a_jcamp_13c_source(tmp_path):
    with pytest.raises(InputError, match="not a JCAMP-DX 13C spectrum"):
        read_peaks("128.4, 77.0", dept135=str(tmp_path / "d.jdx"))


def test_solvent_multiplet_patterns():
    from elucidate.spectrum.synthetic import solvent_multiplet

    # Spin-1 multiplet intensities 1:1:1 and 1:3:6:7:6:3:1 (common practice, no source).
    assert [round(h * 1, 3) for _, h in solvent_multiplet("cdcl3", 100.0)] == [1.0, 1.0, 1.0]
    assert [round(h * 7) for _, h in solvent_multiplet("dmso-d6", 100.0)] == [1, 3, 6, 7, 6, 3, 1]
    assert solvent_multiplet("d2o", 100.0) == []


from hypothesis import given, settings as hsettings
from hypothesis import strategies as st


@hsettings(max_examples=300, deadline=None)
@given(st.lists(st.text(alphabet=st.sampled_from(list("0123456789.+- @ABIabiJKRjkr%STZs?$,E")), max_size=30), max_size=4))
def test_any_data_lines_decode_or_raise_input_error(lines):
    """Robustness (common practice, no source): damaged data never escape as other errors."""
    try:
        decode_xydata_lines(lines)
    except InputError as exc:
        assert "\n" not in str(exc)


@hsettings(max_examples=150, deadline=None)
@given(st.text(alphabet=st.sampled_from(list("#=TITLEXYDAFRSNPOU.()+,0123456789 \n$@ABJj")), max_size=200))
def test_any_text_parses_or_raises_input_error(text):
    try:
        parse_jcamp(text)
    except InputError as exc:
        assert "\n" not in str(exc)


def test_compound_file_with_dept_blocks(tmp_path, dept_files):
    """One file holding 13C, DEPT-90 and DEPT-135 blocks (titles name them)."""
    c13, d135, d90 = dept_files
    parts = []
    for path, title in ((c13, "sample 7 13C"), (d90, "sample 7 DEPT-90"), (d135, "sample 7 DEPT 135")):
        text = path.read_text().replace("##TITLE=13C spectrum", f"##TITLE={title}", 1)
        parts.append(text)
    f = tmp_path / "all.jdx"
    f.write_text("##TITLE=sample 7\n##JCAMP-DX=5.01\n##BLOCKS=3\n" + "".join(parts) + "##END=\n")
    assert [b.experiment for b in read_jcamp_blocks(f)] == ["c13", "dept90", "dept135"]
    pl = read_peaks(str(f))
    got = {round(p.shift, 1): p.multiplicity for p in pl.peaks}
    for shift, h in CARBONS:
        assert got[round(shift, 1)] == ["C", "CH", "CH2", "CH3"][h]
    assert any("compound file" in w for w in pl.provenance)


# DEPT sign rules (common practice, no source): DEPT-135 CH/CH3 up, CH2
# down; DEPT-90 CH only, up.  Carbons: ethyl propanoate-like invented lines.
_LINES = [174.5, 60.4, 27.6, 14.2, 9.1]
_D135 = ([60.4, 27.6, 14.2, 9.1], [-1, -1, 1, 1])


def _tables(tmp_path, title, shifts_heights, pulse=None):
    c13 = tmp_path / "c.jdx"
    c13.write_text(format_jcamp_peak_table(_LINES))
    d = tmp_path / "d.jdx"
    text = format_jcamp_peak_table(*shifts_heights, title=title)
    if pulse:
        text = text.replace("##PEAK TABLE", f"##$PULPROG=<{pulse}>\n##PEAK TABLE", 1)
    d.write_text(text)
    return c13, d


@pytest.mark.parametrize("title, pulse, given_as, named", [
    ("DEPT-90 run", None, "dept135_path", "DEPT-90"),
    ("sample 7 dept90", None, "dept135_path", "DEPT-90"),
    ("run 12", "dept90", "dept135_path", "DEPT-90"),  # pulse-sequence record only
    ("QC-0042 DEPT 135", None, "dept90_path", "DEPT-135"),
    ("run 12", "dept135", "dept90_path", "DEPT-135"),
    ("QC-0042 DEPT_45", None, "dept135_path", "DEPT-45"),
])
def test_dept_file_whose_header_names_another_experiment_is_refused(tmp_path, title, pulse, given_as, named):
    c13, d = _tables(tmp_path, title, _D135, pulse)
    with pytest.raises(InputError) as info:
        peaks_from_jcamp(c13, **{given_as: d})
    msg = str(info.value)
    assert "\n" not in msg and f"is a {named} spectrum by its header" in msg, msg
    assert str(d) in msg and "check the files" in msg


@pytest.mark.parametrize("title, pulse", [
    ("run 12", None),                           # silent header: accepted as given
    ("DEPT-135 run", None),                      # agrees
    ("run 12", "dept135"),                       # agrees
    ("DEPT-135 and DEPT-90 pair", None),         # names both: no guess
])
def test_dept135_header_silent_agreeing_or_ambiguous_is_accepted(tmp_path, title, pulse):
    c13, d = _tables(tmp_path, title, _D135, pulse)
    pl = peaks_from_jcamp(c13, dept135_path=d)
    assert [p.multiplicity for p in pl.peaks] == ["C", "CH2", "CH2", "?", "?"]
    assert not any("negative" in w for w in pl.warnings)


def test_signs_that_do_not_fit_the_experiment_give_warnings_not_errors(tmp_path):
    # A DEPT-135 given as DEPT-90 (silent header): strong negative CH2 lines.
    c13, d = _tables(tmp_path, "run 12", _D135)
    pl = peaks_from_jcamp(c13, dept90_path=d)
    text = " | ".join(pl.warnings)
    assert "DEPT-90 spectrum" in text and "strong negative lines (60.40, 27.60 ppm)" in text
    # A DEPT-90 given as DEPT-135: positive CH lines only, so nothing reads as CH2.
    c13, d = _tables(tmp_path, "run 13", ([60.4], [1.0]))
    pl = peaks_from_jcamp(c13, dept135_path=d)
    assert any("shows no negative (CH2) line" in w and "DEPT-90 or DEPT-45" in w for w in pl.warnings)


def test_regular_dept_pair_gives_no_sign_warning(dept_files):
    c13, d135, d90 = dept_files
    pl = peaks_from_jcamp(c13, d135, d90)
    assert not any("negative" in w for w in pl.warnings), pl.warnings


def test_pulse_sequence_record():
    text = "##TITLE=run 12\n##$PULPROG=<dept135>\n##PEAK TABLE=(XY..XY)\n10,1\n##END=\n"
    spec = parse_jcamp(text)[0]
    assert spec.pulse_sequence == "dept135" and spec.experiment == "dept135"


# --------------------------------------------------------------------------
# the DEPT rules on line lists (common practice, no source)


def test_classify_rules_and_conflicts():
    from elucidate.spectrum.dept import classify_multiplicities

    shifts = [170.0, 128.0, 60.0, 14.0, 40.0, 30.0]
    d135 = [(128.02, 0.7), (60.0, -1.0), (14.0, 1.0), (40.0, 1.0), (40.01, -1.0), (30.0, -1.0), (90.0, 1.0)]
    d90 = [(128.0, 1.0), (14.0, 0.05), (30.0, 0.9)]
    hyd, warnings = classify_multiplicities(shifts, d135, d90)
    assert hyd == (0, 1, 2, 3, None, None)
    text = " | ".join(warnings)
    assert "40.00 ppm shows both positive and negative" in text
    assert "30.00 ppm is positive in DEPT-90 but negative in DEPT-135" in text
    assert "90.00" in text  # unmatched DEPT-135 line
    assert classify_multiplicities(shifts) == ((None,) * 6, ())


def test_classify_rejects_bad_lines():
    from elucidate.spectrum.dept import classify_multiplicities

    with pytest.raises(InputError, match="pairs"):
        classify_multiplicities([10.0], dept135=[(10.0,)])
    with pytest.raises(InputError, match="not finite"):
        classify_multiplicities([10.0], dept90=[(10.0, float("inf"))])
    with pytest.raises(InputError, match="tolerance"):
        classify_multiplicities([10.0], dept90=[], match_tolerance_ppm=0)


def test_module_doctests():
    import doctest

    import elucidate.spectrum.dept as dept_mod
    import elucidate.spectrum.peaks as peaks_mod
    import elucidate.spectrum.solvents as solvents_mod

    for mod in (dept_mod, peaks_mod, solvents_mod):
        failed, tried = doctest.testmod(mod)
        assert failed == 0 and tried > 0, mod.__name__


# --------------------------------------------------------------------------
# outside-world check: real shift lists (open nmrshiftdb2 data)


def test_picking_and_dept_on_database_shift_lists():
    """Spectra synthesised from real assigned shift lists give the lines and
    multiplicities back.

    Source: the open nmrshiftdb2 spectra in ../shared/data/train_spectra.jsonl.gz
    (shift and multiplicity per carbon).  Lines closer than 0.1 ppm are merged
    first (they are one line at this resolution).
    """
    import gzip
    import itertools
    import json
    from pathlib import Path

    from elucidate.spectrum.dept import classify_multiplicities

    path = Path(__file__).resolve().parents[1].parent / "shared" / "data" / "train_spectra.jsonl.gz"
    if not path.exists():
        pytest.skip(f"reference data not present at {path} (only in the development checkout)")
    hmap = {"C": 0, "CH": 1, "CH2": 2, "CH3": 3}
    checked = 0
    with gzip.open(path, "rt", encoding="utf-8") as fh:
        for line in itertools.islice(fh, 0, 400, 10):
            rec = json.loads(line)
            groups: list[list] = []  # merged lines: [shift, hydrogens set, n]
            for shift, mult in sorted(rec["shifts"]):
                if not -10 < shift < 230:
                    break
                if groups and shift - groups[-1][0] < 0.1:
                    groups[-1][1].add(hmap[mult])
                    groups[-1][2] += 1
                else:
                    groups.append([shift, {hmap[mult]}, 1])
            else:
                lines = [(g[0], 30.0 * g[2] if 0 not in g[1] else 12.0 * g[2]) for g in groups]
                x, y = lorentzian_spectrum(lines, npoints=65536, width_hz=1.0, noise=0.3, seed=checked)
                spec = JcampSpectrum("t", "", "^13C", 100.6, x, y, source=str(rec["source_id"]))
                picked = pick_peaks(spec)
                want = sorted((g[0] for g in groups), reverse=True)
                assert len(picked.shifts) == len(want), rec["smiles"]
                assert np.max(np.abs(np.array(picked.shifts) - want)) < 0.1
                single = [g for g in groups if len(g[1]) == 1]
                d135 = [(g[0], dept_heights(next(iter(g[1])), 135)) for g in single if 0 not in g[1]]
                d90 = [(g[0], 1.0) for g in single if g[1] == {1}]  # only CH shows at 90 degrees
                hyd, _ = classify_multiplicities([g[0] for g in single], d135, d90)
                assert list(hyd) == [next(iter(g[1])) for g in single], rec["smiles"]
                checked += 1
    assert checked >= 25
