"""The decimated spectrum a result carries for its report (elucidate.spectrum.trace).

Spectra are synthetic: Lorentzian lines written as JCAMP-DX by
elucidate.spectrum.synthetic / jcamp_write, or the invented scenario
``scenarios/kestrel-coatings-jcamp`` (4-methylpentan-2-one, CDCl3 shifts from
memory of standard 13C tables, see its make_spectra.py).
"""

from pathlib import Path

import numpy as np
import pytest

from elucidate.errors import InputError
from elucidate.spectrum.jcamp_write import format_jcamp_peak_table, format_jcamp_spectrum
from elucidate.spectrum.peaks import read_peaks
from elucidate.spectrum.synthetic import lorentzian_spectrum
from elucidate.spectrum.trace import SpectrumTrace, decimate_minmax, spectrum_trace, trace_for_peaks

ROOT = Path(__file__).resolve().parents[1]
KESTREL = ROOT / "scenarios" / "kestrel-coatings-jcamp"
LINES = [(208.7, 1.0), (52.7, 0.6), (30.31, 0.8), (30.27, 0.5), (24.6, 0.4), (22.5, 1.0)]


def _height_near(x, y, shift, tol=0.2):
    sel = np.abs(x - shift) <= tol
    return float(np.max(y[sel]))


def test_decimation_keeps_the_height_of_every_narrow_line():
    # 2 Hz lines at 100.6 MHz are ~0.02 ppm wide, ~3 points of 32768 over 240 ppm:
    # a plot must not lose them (min/max decimation; common practice, no source).
    x, y = lorentzian_spectrum(LINES, noise=0.002, seed=3)
    dx, dy = decimate_minmax(x, y, 2000)
    assert len(dx) <= 2000
    assert np.all(np.diff(dx) < 0)  # original order kept (descending ppm here)
    for shift, _ in LINES:
        assert _height_near(dx, dy, shift) == _height_near(x, y, shift)
    # control: keeping every 17th point loses at least one line's height
    sx, sy = x[::17], y[::17]
    assert any(_height_near(sx, sy, shift) < 0.8 * _height_near(x, y, shift) for shift, _ in LINES)


def test_short_curves_are_kept_and_bad_arguments_raise():
    x, y = np.arange(10.0), np.arange(10.0) ** 2
    dx, dy = decimate_minmax(x, y, 2000)
    assert dx.tolist() == x.tolist() and dy.tolist() == y.tolist()
    for n in (4, 5, 7):
        dx, dy = decimate_minmax(x, y, n)
        assert len(dx) <= n and dx[0] == x[0] and dx[-1] == x[-1] and max(dy) == max(y)
    with pytest.raises(InputError, match="max_points"):
        decimate_minmax(x, y, 3)
    with pytest.raises(InputError, match="equal length"):
        decimate_minmax(x, y[:5])


def test_trace_of_the_scenario_spectrum():
    path = KESTREL / "drum-rinse-KC-2211_c13.jdx"
    trace = spectrum_trace(path)
    assert isinstance(trace, SpectrumTrace)
    # the file's own records: ##NPOINTS=32768, ##FIRSTX=230, ##LASTX=-10
    assert trace.points == 32768
    assert trace.ppm[0] == pytest.approx(230.0) and trace.ppm[-1] == pytest.approx(-10.0)
    assert 1000 < len(trace.ppm) <= 2000
    assert all(a >= b for a, b in zip(trace.ppm, trace.ppm[1:]))
    assert max(abs(v) for v in trace.intensity) == 1.0
    assert trace.source == path.name and "drum-rinse-KC-2211" in trace.title
    # every line picked from the file stands out of the trace where it was picked
    x, y = np.asarray(trace.ppm), np.asarray(trace.intensity)
    noise = float(np.median(np.abs(y)))
    for p in read_peaks(str(path)):
        assert _height_near(x, y, p.shift, 0.1) > 10 * noise, p.shift


def test_trace_for_peaks_only_for_spectrum_files(tmp_path):
    x, y = lorentzian_spectrum(LINES[:2], npoints=4096)
    spectrum = format_jcamp_spectrum(x, y)
    jdx = tmp_path / "s.jdx"
    jdx.write_text(spectrum)
    unnamed = tmp_path / "export.txt"  # JCAMP-DX content under another name, as read_peaks accepts
    unnamed.write_text(spectrum)
    table = tmp_path / "table.jdx"
    table.write_text(format_jcamp_peak_table([208.7, 52.7]))
    typed = tmp_path / "peaks.txt"
    typed.write_text("208.7 C\n52.7 CH2\n")
    assert trace_for_peaks(str(jdx)).points == 4096
    assert trace_for_peaks(unnamed).points == 4096
    assert trace_for_peaks(str(table)) is None
    assert trace_for_peaks(str(typed)) is None
    assert trace_for_peaks("208.7 C, 52.7 CH2") is None
    assert trace_for_peaks(str(tmp_path / "missing.jdx")) is None  # read_peaks reports that one


def test_compound_file_uses_the_13c_block(tmp_path):
    x, y = lorentzian_spectrum([(100.0, 1.0)], npoints=2048)
    x2, y2 = lorentzian_spectrum([(50.0, 1.0)], npoints=1024)
    c13 = format_jcamp_spectrum(x, y).replace("##TITLE=13C spectrum", "##TITLE=s 13C", 1)
    dept = format_jcamp_spectrum(x2, y2).replace("##TITLE=13C spectrum", "##TITLE=s DEPT-135", 1)
    f = tmp_path / "all.jdx"
    f.write_text("##TITLE=s\n##JCAMP-DX=5.01\n##BLOCKS=2\n" + dept + c13 + "##END=\n")
    trace = spectrum_trace(f)
    assert trace.points == 2048 and trace.title == "s 13C"
