"""The spectra reader: formats, units, validation and robustness."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from cvdfilter.errors import InputError
from cvdfilter.io.spectra_files import parse_spectra_text, read_spectra
from cvdfilter.spectra.filters import load_filters

WL = np.arange(380, 781, 5.0)
T = 0.9 - 0.7 * np.exp(-4 * np.log(2) * (WL - 575) ** 2 / 40 ** 2)


def _text(values, delim=",", header=None):
    lines = [header] if header else []
    lines += [f"{w:g}{delim}{v:.8f}" for w, v in zip(WL, values)]
    return "\n".join(lines) + "\n"


def test_units_round_trip(write):
    # One curve written as fraction, percent and optical density (T = 10^-OD, the definition of optical
    # density; common practice) reads back to the same transmittance.
    f = write("f.csv", _text(T))
    p = write("p.tsv", _text(T * 100, "\t"))
    od = write("od.txt", _text(-np.log10(T), " ", header="nm absorbance"))
    tables = [read_spectra(x) for x in (f, p, od)]
    assert [t.units for t in tables] == ["fraction", "percent", "od"]
    for t in tables:
        assert np.allclose(t.values[0], T, atol=1e-7)
    fs = load_filters([str(f), str(p), str(od)])
    assert np.allclose(fs.transmittance[0], fs.transmittance[1]) and np.allclose(fs.transmittance[0], fs.transmittance[2])


def test_units_override_and_reason(write):
    p = write("p.csv", _text(T * 100))
    t = read_spectra(p)
    assert t.units == "percent" and "percent" in t.units_reason
    with pytest.raises(InputError, match="far above 1"):
        read_spectra(p, units="fraction")


def test_semicolon_decimal_comma_and_header_names(write):
    text = "nm;lens A;lens B\n" + "\n".join(f"{w:g};{str(round(v, 4)).replace('.', ',')};0,5" for w, v in zip(WL, T))
    t = read_spectra(write("eu.csv", text))
    assert t.names == ["lens A", "lens B"]
    assert np.allclose(t.values[1], 0.5)


def test_multi_column_names_without_header(write):
    text = "\n".join(f"{w:g},{v},{v / 2}" for w, v in zip(WL, T))
    t = read_spectra(write("two.csv", text))
    assert t.names == ["two.csv:1", "two.csv:2"]


def test_warnings_sort_clip_coarse(write):
    wl = np.arange(380, 781, 20.0)
    v = np.full(wl.size, 0.5)
    v[3] = -0.01
    rows = [f"{w:g},{x}" for w, x in zip(wl, v)]
    rows[4], rows[5] = rows[5], rows[4]
    t = read_spectra(write("w.csv", "\n".join(rows)))
    text = " ".join(t.warnings)
    assert "sorted" in text and "clipped 1 small negative" in text and "coarser" in text
    assert np.all(np.diff(t.wavelengths) > 0) and t.values.min() == 0


@pytest.mark.parametrize("text,match", [
    ("", "empty"),
    ("# only a comment\n", "empty"),
    ("380,0.5\n", "fewer than 2"),
    ("380,0.5\n400,abc\n", "non-numeric"),
    ("380,0.5\n400,nan\n", "not a finite"),
    ("380,0.5\n400,inf\n", "not a finite"),
    ("380,0.5\n380,0.6\n700,0.5\n", "appears twice"),
    ("420,0.5\n780,0.5\n", "missing 400-420 nm"),
    ("380,0.5\n650,0.5\n", "missing 650-700 nm"),
    ("380,-0.5\n780,0.5\n", "far below 0"),
    ("380,0.5,0.2\n780,0.5\n", "expected 3 columns"),
])
def test_bad_files_one_line_errors(write, text, match):
    path = write("bad.csv", text)
    with pytest.raises(InputError, match=match) as info:
        read_spectra(path)
    msg = str(info.value)
    assert "bad.csv" in msg and "\n" not in msg


def test_error_names_line_and_column(write):
    path = write("bad.csv", "nm,T\n380,0.5\n390,0.5\n400,x\n780,0.5\n")
    with pytest.raises(InputError) as info:
        read_spectra(path)
    assert "line 4" in str(info.value) and "column 2" in str(info.value)


def test_tm2714_xml_read_with_colour(tmp_path):
    # IES TM-27-14 is read through colour-science (colour.SpectralDistribution_IESTM2714); write one with
    # colour-science and read it back.
    import colour

    header = colour.io.Header_IESTM2714(manufacturer="Invented", description="xml lens")
    tm = colour.SpectralDistribution_IESTM2714(header=header, spectral_quantity="transmittance", data=T, domain=WL)
    tm.path = str(tmp_path / "lens.spdx")
    tm.write()
    t = read_spectra(tmp_path / "lens.spdx")
    assert np.allclose(t.values[0], T, atol=1e-6)
    assert t.names == ["xml lens"]


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.text(alphabet=st.characters(blacklist_categories=("Cs",)), max_size=400))
def test_arbitrary_text_never_crashes(text):
    # Property: any text either parses or raises the tool's own InputError.
    try:
        parse_spectra_text(text, "fuzz.csv")
    except InputError:
        pass


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.floats(300, 900, allow_nan=False), st.floats(-5, 200)), min_size=0, max_size=40),
       st.sampled_from([",", "\t", ";", " "]))
def test_arbitrary_numeric_tables_never_crash(rows, delim):
    text = "\n".join(f"{w}{delim}{v}" for w, v in rows)
    try:
        t = parse_spectra_text(text, "fuzz.csv")
    except InputError:
        return
    assert np.all(np.diff(t.wavelengths) > 0)
    assert t.values.min() >= 0 and t.values.max() <= 1
