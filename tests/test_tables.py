"""CSV tables with units in their headers (``ventflux.tables.read_quantity_table``).

The reference reading is Python's own ``csv`` module with ``float`` per cell, written here: the table reader
splits unquoted lines itself and converts whole columns at once, and must read exactly what the csv module reads.
"""

from __future__ import annotations

import csv
import io

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux.errors import InputError, InputErrors
from ventflux.tables import read_quantity_table

_numbers = st.floats(allow_nan=False, allow_infinity=False, width=64)
_cell = st.one_of(_numbers.map(repr), _numbers.map(lambda x: f" {x:.6g} "), _numbers.map(lambda x: f'"{x!r}"'))


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(_cell, _cell), min_size=1, max_size=30), st.booleans())
def test_columns_read_as_the_csv_module_reads_them(tmp_path_factory, rows, comments):
    path = tmp_path_factory.mktemp("t") / "t.csv"
    lines = ['"depth [m]",temperature [degC]'] + [f"{a},{b}" for a, b in rows]
    if comments:
        lines.insert(1, "# a comment line")
        lines.append("")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    body = [r for r in csv.reader(io.StringIO("\n".join(f"{a},{b}" for a, b in rows)))]
    t = read_quantity_table(path, {"depth": "length", "temperature": "temperature"})
    np.testing.assert_array_equal(t.columns["depth"].to("m").magnitude, [float(r[0]) for r in body])
    np.testing.assert_array_equal(t.columns["temperature"].magnitude, [float(r[1]) for r in body])


def test_every_bad_cell_is_named_with_its_line(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("depth [m],temperature [degC]\n1,2\n,3\n4,inf\nfive,6\n", encoding="utf-8")
    with pytest.raises((InputError, InputErrors)) as e:
        read_quantity_table(path, {"depth": "length", "temperature": "temperature"})
    text = str(e.value)
    for where, value in (("t.csv:3", "(empty)"), ("t.csv:4", "inf"), ("t.csv:5", "five")):
        assert where in text and value in text, text


def test_missing_cells_read_as_nan_when_allowed(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("depth [m]\n1\n\"\"\nnan\n2\n", encoding="utf-8")
    t = read_quantity_table(path, {"depth": "length"}, allow_missing=True)
    np.testing.assert_array_equal(t.columns["depth"].magnitude, [1.0, np.nan, np.nan, 2.0])
    np.testing.assert_array_equal(t.lines, [2, 3, 4, 5])


@pytest.mark.parametrize("newline", ["\n", "\r\n", "\r"])
def test_line_endings_and_a_byte_order_mark(tmp_path, newline):
    # spreadsheet exports: Windows and old Mac line endings, a UTF-8 byte order mark, a trailing empty column
    path = tmp_path / "t.csv"
    text = newline.join(["depth [m],temperature [degC],", "1.5,2.25,", "3,4.5,"]) + newline
    path.write_bytes(b"\xef\xbb\xbf" + text.encode("utf-8"))
    t = read_quantity_table(path, {"depth": "length", "temperature": "temperature"})
    np.testing.assert_array_equal(t.columns["depth"].magnitude, [1.5, 3.0])
    np.testing.assert_array_equal(t.columns["temperature"].magnitude, [2.25, 4.5])
    np.testing.assert_array_equal(t.lines, [2, 3])
