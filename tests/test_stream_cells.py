"""The streamed rows built column by column (cvdfilter.score_stream_cells) against the CSV view's rows.

References outside the column builder: Python's own ``round`` (CPython's correctly rounded decimal
conversion) for the rounding; ``Scorecard.csv_rows`` / ``to_csv`` (one filter's JSON entry at a time,
flattened) for every cell of whole chunks, not only the probe a streamed run checks; Python's ``csv``
module (through ``tables.csv_text``) for the CSV text.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from cvdfilter.score_stream_cells import Cells, cells_match, chunk_cells, csv_lines, round_like_python


def test_rounding_is_pythons_round_on_every_value():
    rng = np.random.default_rng(7)
    x = np.concatenate([
        rng.uniform(-2, 2, 200_000),
        rng.lognormal(0, 6, 50_000),  # 1e-8 .. 1e8
        # half-way points and their neighbours, where a product rounded to a double may decide wrongly
        np.nextafter((np.arange(-5000, 5000) + 0.5) / 1e6, np.inf),
        np.nextafter((np.arange(-5000, 5000) + 0.5) / 1e6, -np.inf),
        (np.arange(-5000, 5000) + 0.5) / 1e6, (np.arange(0, 4000) + 0.5) / 1e4, (np.arange(0, 400) + 0.5) / 1e2,
        np.array([0.0, -0.0, 1e-300, -1e-300, 2.0 ** 52, 2.0 ** 60 + 0.5, 1e300, 0.0078125, 2.675, 1.0000005]),
    ])
    for digits in (1, 2, 4, 5, 6):
        got = round_like_python(x, digits)
        want = [round(v, digits) + 0.0 for v in x.tolist()]  # Python's round: the reference
        assert got.tolist() == want, digits  # the same doubles (and +0.0, never -0.0)
        assert not any(math.copysign(1, v) < 0 for v, w in zip(got.tolist(), want) if v == 0)
    odd = round_like_python([np.nan, np.inf, -np.inf, 1.5], 6)
    assert np.isnan(odd[:3]).all() and odd[3] == 1.5


def test_cells_match_is_strict_about_types():
    assert cells_match([1, 2.0, None, "a", True], [1, 2.0, None, "a", True])
    assert not cells_match([1], [1.0])  # the CSV would write 1 and 1.0
    assert not cells_match([True], [1])
    assert not cells_match([None], [""])


CASES = [  # filters, observers, metrics
    (["notch:center=450..650/25,fwhm=5..80/15,depth=0.2..1/0.4", "nd:t=0", "nd:t=0.02"],
     ["normal", "protanomalous", "deuteranope", "tritanope"], "core"),
    (["examples/bench-lenses.csv", "examples/grey-lens-od.csv", "nd:t=0.3*notch:center=580,fwhm=30,depth=0.9",
      "larkhill-notch-575"],
     ["deuteranomalous:severity=0.6,model=machado2009", "normal:age=70,field=10", "tritanomalous:shift=15"],
     "core,rendition"),
    (["longpass:edge=400..600/50,width=10"], ["normal"], "photometry,road_use,contrast,discrimination"),
]


@pytest.mark.parametrize("filters,observers,metrics", CASES)
def test_chunk_cells_equal_the_csv_view_in_every_cell(filters, observers, metrics):
    from cvdfilter import score
    from cvdfilter.tables import csv_text

    card = score(filters, observers=observers, metrics=metrics)
    columns, rows = card.csv_rows()  # the reference: one filter's JSON entry at a time, flattened
    cells = chunk_cells(card, columns)
    assert list(cells) == columns
    for j, c in enumerate(columns):
        assert cells_match(cells[c].tolist(), [r[j] for r in rows]), c
    text = csv_text(columns, []) + csv_lines([cells[c] for c in columns])
    assert text == card.to_csv()


def test_csv_lines_with_a_line_break_in_a_cell():
    from cvdfilter.tables import csv_text

    cols = [Cells(["a\nb", "c"]), Cells(np.array([1.5, 2.0]), np.array([False, True])),
            Cells(["x, y"] * 2, const=True), Cells(["z"] * 2, const=True)]
    want = csv_text([], [["a\nb", 1.5, "x, y", "z"], ["c", None, "x, y", "z"]])[1:]
    assert csv_lines(cols) == want
    cols[0] = Cells(["ab", "c"])
    assert csv_lines(cols) == csv_text([], [["ab", 1.5, "x, y", "z"], ["c", None, "x, y", "z"]])[1:]


def test_a_column_the_first_filters_lack_is_refused():
    from cvdfilter import score
    from cvdfilter.errors import InputError

    card = score("nd:t=0.5", observers=["normal"], metrics="core")
    columns, _ = card.csv_rows()
    with pytest.raises(InputError, match="give columns the first filters do not"):
        chunk_cells(card, [c for c in columns if c != "white_shift"])
