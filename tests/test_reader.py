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
    f = write("f.csv", _text(T, header="nm,T (fraction)"))
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
    text = "nm;lens A (fraction);lens B (fraction)\n" + "\n".join(f"{w:g};{str(round(v, 4)).replace('.', ',')};0,5" for w, v in zip(WL, T))
    t = read_spectra(write("eu.csv", text))
    assert t.names == ["lens A (fraction)", "lens B (fraction)"]
    assert np.allclose(t.values[1], 0.5)


def test_multi_column_names_without_header(write):
    text = "\n".join(f"{w:g},{v},{v / 2}" for w, v in zip(WL, T))
    t = read_spectra(write("two.csv", text), units="fraction")
    assert t.names == ["two.csv:1", "two.csv:2"]


def test_warnings_sort_clip_coarse(write):
    wl = np.arange(380, 781, 20.0)
    v = np.full(wl.size, 0.5)
    v[3] = -0.01
    rows = [f"{w:g},{x}" for w, x in zip(wl, v)]
    rows[4], rows[5] = rows[5], rows[4]
    t = read_spectra(write("w.csv", "\n".join(rows)), units="fraction")
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
    ("380,-50\n780,0.5\n", "far below 0"),
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


# --- users' files (tests/data/, invented; see tests/data/make_user_files.py) ----------------------------------

DATA = __import__("pathlib").Path(__file__).resolve().parent / "data"


def test_abs_header_is_optical_density_and_says_which_rule():
    # A tab file headed "nm<TAB>Abs" with values 0.03-0.63 is optical density: T = 10^-OD (definition of
    # optical density / absorbance, common practice), not a fraction.
    t = read_spectra(DATA / "abs_header_tab.txt")
    raw = np.loadtxt(DATA / "abs_header_tab.txt", skiprows=2)
    assert t.units == "od" and "header 'Abs'" in t.units_reason
    assert np.allclose(t.values[0], 10 ** -raw[:, 1])


@pytest.mark.parametrize("name", ["od_header_A.csv", "od_header_abs_dot.csv", "od_header_absorbance.csv",
                                  "od_header_OD.csv", "od_header_optical_density.csv", "od_header_D.csv"])
def test_optical_density_header_words(name):
    t = read_spectra(DATA / name)
    assert t.units == "od" and t.units_reason.startswith("header")


@pytest.mark.parametrize("name", ["pct_header_percent_T.csv", "pct_header_T_percent.csv",
                                  "pct_header_T_paren_percent.csv", "pct_header_transmission_brackets.csv",
                                  "pct_header_transmittance_paren.csv"])
def test_percent_header_words(name):
    t = read_spectra(DATA / name)
    assert t.units == "percent" and "names percent" in t.units_reason
    # the same curve as the OD files: %T = 100 * 10^-OD
    assert np.allclose(t.values[0], read_spectra(DATA / "od_header_OD.csv").values[0], atol=1e-4)


@pytest.mark.parametrize("name", ["reflectance_percent_R_in_filter.csv", "reflectance_R_percent_in_filter.csv"])
def test_percent_reflectance_refused_in_a_filter_file(name):
    with pytest.raises(InputError, match="percent reflectance.*filter file holds transmittance"):
        read_spectra(DATA / name)
    # ...but read as percent for a surface file
    assert read_spectra(DATA / name, kind="reflectance").units == "percent"


def test_header_unit_wins_over_the_values():
    # Values 0.03-0.63 would fit a fraction; the header says optical density and wins.
    t = read_spectra(DATA / "od_header_OD.csv")
    assert t.units == "od" and t.values.max() < 0.94


def test_dark_lens_without_unit_is_refused_with_one_line_asking_for_units():
    with pytest.raises(InputError) as info:
        read_spectra(DATA / "dark_lens_percent_no_unit.csv")
    msg = str(info.value)
    assert "dark_lens_percent_no_unit.csv" in msg and "--units" in msg and "\n" not in msg
    assert "fraction, percent or optical density" in msg
    t = read_spectra(DATA / "dark_lens_percent_no_unit.csv", units="percent")
    assert t.values.max() < 0.008 and t.units_reason.startswith("given")


def test_values_decide_only_when_one_reading_is_possible():
    # 5-92 with a median far above any optical density: only percent fits.
    t = read_spectra(DATA / "percent_by_range_no_unit.csv")
    assert t.units == "percent" and "fit only percent" in t.units_reason


@pytest.mark.parametrize("name,readings", [("od_values_reach_99_no_unit.csv", "percent or optical density"),
                                           ("t_1_5_everywhere_no_unit.csv", "percent or optical density")])
def test_silent_wrong_units_are_refused(name, readings):
    # An OD file with 99 out-of-range markers, or t = 1.5 everywhere, must not silently become percent.
    with pytest.raises(InputError, match=readings):
        read_spectra(DATA / name)


def test_per_column_units_from_each_header():
    t = read_spectra(DATA / "mixed_units_per_column.csv")
    assert t.column_units == ["percent", "od"] and t.units == "mixed"
    assert np.allclose(t.values[0], t.values[1], atol=1e-4)


def test_two_units_in_one_header_refused():
    with pytest.raises(InputError, match="names both"):
        read_spectra(DATA / "header_names_two_units.csv")


def test_far_negative_values_refused():
    with pytest.raises(InputError, match="far below 0 in any unit"):
        read_spectra(DATA / "far_negative_values.csv")


def test_quoted_numeric_cells_are_accepted():
    t = read_spectra(DATA / "quoted_cells.csv")
    assert t.units == "percent" and t.wavelengths[0] == 380 and t.names == ["%T"]


@pytest.mark.parametrize("name", ["workbook.xlsx", "workbook.ods"])
def test_spreadsheets_get_one_line_asking_for_delimited_text(name):
    with pytest.raises(InputError, match="export the sheet as delimited text") as info:
        read_spectra(DATA / name)
    assert name in str(info.value)


def test_tm2714_without_spectral_data_names_the_file():
    with pytest.raises(InputError, match="no spectral data") as info:
        read_spectra(DATA / "tm2714_no_spectral_data.spdx")
    assert "tm2714_no_spectral_data.spdx" in str(info.value)


# --- limits: checked before allocating; only regular files ------------------------------------------------------

def test_file_over_the_size_limit_refused_before_reading(tmp_path):
    # A 200 MB file (sparse: made on the fly, never committed) is refused from its size alone.
    from cvdfilter.io.spectra_files import MAX_FILE_BYTES

    big = tmp_path / "big.csv"
    with open(big, "wb") as fh:
        fh.truncate(200 * 2**20)
    assert big.stat().st_size > MAX_FILE_BYTES
    with pytest.raises(InputError, match="MiB"):
        read_spectra(big)


def test_too_many_rows_refused_before_parsing(tmp_path):
    import tracemalloc

    from cvdfilter.io.spectra_files import MAX_LINES

    f = tmp_path / "rows.csv"
    f.write_text("1,1\n" * (MAX_LINES + 10))
    tracemalloc.start()
    with pytest.raises(InputError, match="lines; at most"):
        read_spectra(f)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert peak < 40 * 2**20  # the text itself (0.8 MB) and not a row list


def test_too_many_columns_refused(tmp_path):
    from cvdfilter.io.spectra_files import MAX_COLUMNS

    f = tmp_path / "wide.csv"
    f.write_text("\n".join(",".join([str(w)] + ["0.5"] * (MAX_COLUMNS + 1)) for w in (380, 780)))
    with pytest.raises(InputError, match="columns; at most"):
        read_spectra(f)


def test_dev_zero_and_named_pipe_are_refused_without_reading(tmp_path):
    import os

    with pytest.raises(InputError, match="not a regular file"):
        read_spectra("/dev/zero")
    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    with pytest.raises(InputError, match="not a regular file"):  # opening it would block forever
        read_spectra(fifo)


def test_huge_cell_is_not_echoed(tmp_path):
    f = tmp_path / "cell.csv"
    f.write_text("380,0.5\n400," + "x" * 20_000_000 + "\n780,0.5\n")
    with pytest.raises(InputError) as info:
        read_spectra(f)
    assert len(str(info.value)) < 700 and "x" * 100 not in str(info.value)
    f.write_text("380,0.5\n400,1" + "0" * 5_000_000 + "\n780,0.5\n")  # a number too large to be finite
    with pytest.raises(InputError) as info:
        read_spectra(f)
    assert len(str(info.value)) < 700


def test_huge_header_refused(tmp_path):
    f = tmp_path / "head.csv"
    f.write_text("nm," + "T" * 100_000 + "\n380,0.5\n780,0.5\n")
    with pytest.raises(InputError, match="characters long") as info:
        read_spectra(f)
    assert len(str(info.value)) < 700


@settings(max_examples=80, deadline=None)
@given(st.lists(st.floats(0.0, 1.0), min_size=81, max_size=81))
def test_values_within_0_1_without_unit_word_are_never_guessed(vals):
    # Property: values that fit a fraction also fit percent and optical density, so with no unit word the
    # reader refuses (asking for --units); with a unit word or --units it reads them exactly.
    rows = "\n".join(f"{w:g},{v!r}" for w, v in zip(WL, vals))
    with pytest.raises(InputError, match="--units"):
        parse_spectra_text("nm,T\n" + rows, "fuzz.csv")
    t = parse_spectra_text("nm,T (fraction)\n" + rows, "fuzz.csv")
    assert np.allclose(t.values[0], vals)
    p = parse_spectra_text("nm,T\n" + rows, "fuzz.csv", units="percent")
    assert np.allclose(p.values[0], np.asarray(vals) / 100)
