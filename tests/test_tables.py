"""Issue 15: a result at home in a notebook -- short repr, HTML budget, pandas
tables, one source's numbers -- and CSV headers a spreadsheet reads as they are."""

from __future__ import annotations

import csv
import io
import sys

import _output_samples as samples  # tests/ is on sys.path (conftest.py)
import numpy as np
import pandas as pd
import pytest

from netnoise.errors import UsageError
from netnoise.outputs.export import column_name, csv_header, frequency_text, to_csv


def test_repr_is_one_short_line_with_the_total_and_the_dominant_source():
    text = repr(samples.resistors())
    assert "\n" not in text and len(text) < 200
    # 3.64 µV: sqrt(4kT·20 kΩ·2²·(10 kHz − 1 Hz)) at 300 K (Johnson/Nyquist, by hand); R3 is 15/20 of ΣR
    assert text == (
        "<NoiseResult 'three resistors': v(out, ref), 1 Hz..10 kHz, 3.64 µV rms, 3 sources, "
        "dominant R3 (thermal, 75.0 %)>"
    )


def test_html_budget_table_escapes_names():
    result = samples.resistors()
    result = type(result)(
        **{
            **{f: getattr(result, f) for f in result.__dataclass_fields__},
            "source_names": ("<b>R1</b>", "R2 & co", "R3"),
            "source_elements": (),
        }
    )
    page = result._repr_html_()
    assert "&lt;b&gt;R1&lt;/b&gt;" in page and "R2 &amp; co" in page and "<b>R1</b>" not in page
    assert page.count("<tr>") == 4  # header and three ranked rows
    assert page.index(">R3<") < page.index("R2 &amp; co") < page.index("&lt;b&gt;R1")


def test_source_gives_density_variance_share_and_rank():
    result = samples.resistors()
    row = result.source("r2")  # case-insensitive
    assert row.rank == 2 and row.index == 1
    assert row.share == pytest.approx(0.20, rel=1e-12)  # 4 kΩ of 20 kΩ (sample construction)
    np.testing.assert_array_equal(row.density, result.source_density[1])
    np.testing.assert_allclose(row.density_rt, np.sqrt(result.source_density[1]), rtol=1e-15)
    assert row.variance_V2 == result.source_variance[1]
    assert "density=" not in repr(row)  # the array stays out of the row's repr
    with pytest.raises(KeyError):
        result.source("R9")


def test_budget_dataframe_is_numeric_with_units_in_the_names():
    frame = samples.front_end().to_dataframe()
    assert list(frame["label"]) == ["Rs", "Xu1 (voltage)", "Xu1 (in+)", "R1"]
    for column in ("rank", "value", "count", "variance_V2", "rms_V", "share", "cumulative_share"):
        assert pd.api.types.is_numeric_dtype(frame[column]), column
    assert frame["share"].tolist() == pytest.approx([0.5, 0.3, 0.1, 0.1], rel=1e-12)  # sample construction
    assert frame["value"].tolist() == pytest.approx([50.0, 4e-9, 1e-12, 10.0], rel=1e-15)
    assert list(frame["unit"]) == ["Ω", "V/√Hz", "A/√Hz", "Ω"]
    np.testing.assert_allclose(frame["rms_V"] ** 2, frame["variance_V2"], rtol=1e-12)


def test_grouped_and_spectrum_dataframes():
    result = samples.front_end()
    by_element = result.to_dataframe(group_by="element")
    assert list(by_element["label"]) == ["Rs", "Xu1", "R1"] and by_element["count"].tolist() == [1, 2, 1]
    spectrum = result.to_dataframe("spectrum")
    assert spectrum.index.name == "frequency_Hz"
    assert list(spectrum.columns) == [
        "total_output_V2_per_Hz",
        "Rs__V2_per_Hz",
        "Xu1_voltage__V2_per_Hz",
        "Xu1_in_plus__V2_per_Hz",
        "R1__V2_per_Hz",
    ]
    np.testing.assert_allclose(spectrum.iloc[:, 1:].sum(axis=1), spectrum["total_output_V2_per_Hz"], rtol=1e-12)


def test_dataframe_without_pandas_names_the_extra(monkeypatch):
    monkeypatch.setitem(sys.modules, "pandas", None)  # what `import pandas` sees when it is not installed
    with pytest.raises(UsageError, match=r"pip install 'netnoise\[tables\]'"):
        samples.resistors().to_dataframe()


@pytest.mark.parametrize(
    "label, header",
    [
        ("Xpre (in+)", "Xpre_in_plus__V_per_rtHz"),
        ("XU1 (in-)", "XU1_in_minus__V_per_rtHz"),
        ("X1.R2 (excess)", "X1_R2_excess__V_per_rtHz"),
        ("amplifier-voltage", "amplifier_voltage__V_per_rtHz"),
        ('R 1,"x"', "R_1_x__V_per_rtHz"),
        ("", "source__V_per_rtHz"),
    ],
)
def test_column_name_rule(label, header):
    assert column_name(label) == header


def test_csv_headers_unique_and_read_by_pandas_without_quoting():
    result = samples.resistors()
    names = ("X1.R2", "X1_R2", "Xpre (in+)")  # the first two clean to one name
    fields = {f: getattr(result, f) for f in result.__dataclass_fields__}
    result = type(result)(**{**fields, "source_names": names, "source_elements": ()})
    text = to_csv(result)
    first = text.splitlines()[0]
    assert '"' not in first and " " not in first
    header = csv_header(result)
    assert len(set(header)) == len(header)
    # ranks: Xpre (in+) 75 %, X1_R2 20 %, X1.R2 5 %: the later one in rank order gets _2
    assert header[2:] == [
        "Xpre_in_plus__V_per_rtHz",
        "X1_R2__V_per_rtHz",
        "X1_R2_2__V_per_rtHz",
        "input_referred_V_per_rtHz",
    ]
    frame = pd.read_csv(io.StringIO(text))
    assert list(frame.columns) == header
    np.testing.assert_allclose(frame["Xpre_in_plus__V_per_rtHz"], np.sqrt(result.source_density[2]), rtol=1e-15)


def test_group_reaches_the_csv():
    result = samples.front_end(with_noise_figure=False)
    rows = list(csv.reader(io.StringIO(to_csv(result, group_by="element"))))
    assert rows[0] == [
        "frequency_Hz",
        "total_output_V_per_rtHz",
        "Rs__V_per_rtHz",
        "Xu1__V_per_rtHz",
        "R1__V_per_rtHz",
        "input_referred_V_per_rtHz",
    ]
    table = np.array(rows[1:], dtype=float)
    # Xu1's column is the power sum of its two sources (uncorrelated sources add in power)
    np.testing.assert_allclose(table[:, 3] ** 2, result.source_density[1] + result.source_density[2], rtol=1e-12)
    by_mechanism = next(csv.reader(io.StringIO(to_csv(result, group_by="mechanism"))))
    assert by_mechanism[2:] == [
        "thermal__V_per_rtHz",
        "amplifier_voltage__V_per_rtHz",
        "amplifier_current__V_per_rtHz",
        "input_referred_V_per_rtHz",
    ]


def test_frequencies_are_written_cleanly():
    grid = np.logspace(-1, 1, 41)  # a log grid whose first point is 0.1 only to within an ulp
    assert frequency_text(float(grid[0])) == "0.1"
    assert frequency_text(0.10000000000000002) == "0.1"
    assert frequency_text(1.1220184543019633) == "1.1220184543019633"  # not near a short decimal: exact repr
    assert frequency_text(1e-20) == "1e-20"
    # a value 15 digits cannot reach within 4 ulp keeps its exact repr
    odd = 0.1 + 40 * float(np.finfo(float).eps)
    assert frequency_text(odd) == repr(odd)
    result = samples.white(
        frequency_Hz=np.array([0.10000000000000002, 0.2, 0.30000000000000004]),
        low=0.1,
        high=0.3,
        source_density=np.full((1, 3), 1e-14),
        cumulative_variance=np.array([0.0, 1e-15, 2e-15]),
    )
    column = [line.split(",")[0] for line in to_csv(result).splitlines()[1:]]
    assert column == ["0.1", "0.2", "0.3"]


def test_import_netnoise_loads_neither_pandas_nor_matplotlib():
    import subprocess

    code = "import sys, netnoise; print('pandas' in sys.modules, 'matplotlib' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.split() == ["False", "False"]


def test_repr_of_a_one_source_result():
    # 100 nV/√Hz over 4 Hz is 200 nV rms (common practice: white noise power grows with bandwidth)
    assert (
        repr(samples.white())
        == "<NoiseResult 'white check': v(out), 1 Hz..5 Hz, 200 nV rms, 1 source, dominant R1 (thermal, 100.0 %)>"
    )
