"""Regenerate the synthetic JCAMP-DX spectra of this invented scenario.

    python scenarios/kestrel-coatings-jcamp/make_spectra.py

The spectra are computed (Lorentzian lines, seeded noise, CDCl3 triplet) by
:func:`elucidate.spectrum.synthetic.write_demo_spectra`, not measured.
Shifts of 4-methylpentan-2-one in CDCl3 from memory of standard 13C tables
(C=O 208.7, CH2 52.7, COCH3 30.3, CH 24.6, 2 x CH3 22.5 ppm).
"""

from pathlib import Path

from elucidate.spectrum.synthetic import write_demo_spectra

#: (shift in ppm, attached H) for every carbon; the two isopropyl methyls repeat.
CARBONS = [(208.7, 0), (52.7, 2), (30.3, 3), (24.6, 1), (22.5, 3), (22.5, 3)]


def main(directory: Path = Path(__file__).resolve().parent) -> dict:
    return write_demo_spectra(CARBONS, directory, stem="drum-rinse-KC-2211", solvent="cdcl3",
                              observe_mhz=100.6, form="DIFDUP", noise=0.4, seed=11, npoints=32768)


if __name__ == "__main__":
    for key, path in main().items():
        print(key, path)
