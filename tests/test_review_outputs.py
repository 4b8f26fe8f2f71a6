"""Issue 15: the command line's outputs for a design review -- every --plot
written, --group in the CSV, the self-contained --html report (loaded in
headless chromium) -- on small circuits invented for these tests."""

from __future__ import annotations

import csv
import io
import re
import shutil
import subprocess

import numpy as np
import pytest

from netnoise import cli

#: An invented circuit: a 10 kΩ thick-film resistor (noise index) with 2.5 V
#: across it, beside a metal-film 10 kΩ, into a 1 nF capacitor; V1 is the input.
DIVIDER = """\
divider with an excess-noise resistor & <markup> in its title
V1   in   0    DC 5 AC 1
Rc1  in   out  10k  ni=-10
R2   out  0    10k
C1   out  0    1n
.noise v(out) V1 dec 10 10 100k
.end
"""

#: Every part noiseless: an ideal source driving a capacitor into an ideal inductor.
SILENT = """\
nothing makes noise here
V1   in   0    DC 0 AC 1
C1   in   out  1n
L1   out  0    1m
.noise v(out) V1 dec 10 10 100k
.end
"""


@pytest.fixture
def divider(tmp_path):
    path = tmp_path / "divider.cir"
    path.write_text(DIVIDER)
    return path


def run(*args) -> int:
    return cli.main([str(a) for a in args])


def test_every_plot_given_is_written(divider, tmp_path, capsys):
    png, svg, second_png = tmp_path / "a.png", tmp_path / "b.svg", tmp_path / "c.png"
    assert run("analyze", divider, "--plot", png, "--plot", svg, "--plot", second_png) == 0
    assert png.read_bytes().startswith(b"\x89PNG") and svg.read_bytes().startswith(b"<?xml")
    assert second_png.read_bytes() == png.read_bytes()
    err = capsys.readouterr().err
    assert all(f"wrote {p}" in err for p in (png, svg, second_png))


def test_two_plots_on_one_file_are_refused(divider, tmp_path, capsys):
    target = tmp_path / "a.png"
    assert run("analyze", divider, "--plot", target, "--plot", target) == 2
    assert "give each output its own file" in capsys.readouterr().err
    assert not target.exists()


def test_input_referred_plot_needs_a_plot(divider, tmp_path, capsys):
    assert run("analyze", divider, "--plot-input-referred") == 2
    assert "--plot PATH" in capsys.readouterr().err
    target = tmp_path / "referred.svg"
    assert run("analyze", divider, "--plot", target, "--plot-input-referred") == 0
    assert "input-referred noise density" in target.read_text()


def test_a_noiseless_circuit_is_refused_before_anything_is_written(tmp_path, capsys):
    path = tmp_path / "silent.cir"
    path.write_text(SILENT)
    target = tmp_path / "silent.png"
    assert run("analyze", path, "--plot", target) == 1
    out, err = capsys.readouterr()
    assert "no noise source reaches this output" in err and out == ""
    assert not target.exists()


def test_group_reaches_the_csv_from_the_command_line(divider, tmp_path):
    by_source, by_element = tmp_path / "s.csv", tmp_path / "e.csv"
    assert run("analyze", divider, "--csv", by_source) == 0
    assert run("analyze", divider, "--csv", by_element, "--group", "element") == 0
    header = next(csv.reader(io.StringIO(by_source.read_text())))
    assert sorted(header[2:]) == [
        "R2__V_per_rtHz",
        "Rc1__V_per_rtHz",
        "Rc1_excess__V_per_rtHz",
        "input_referred_V_per_rtHz",
    ]
    rows = list(csv.reader(io.StringIO(by_element.read_text())))
    assert sorted(rows[0][2:]) == ["R2__V_per_rtHz", "Rc1__V_per_rtHz", "input_referred_V_per_rtHz"]
    assert rows[1][0] == "10"  # the grid's first point, written as the decade it is
    sources = np.array(list(csv.reader(io.StringIO(by_source.read_text())))[1:], dtype=float)
    elements = np.array(rows[1:], dtype=float)
    rc1 = rows[0].index("Rc1__V_per_rtHz")
    thermal, excess = header.index("Rc1__V_per_rtHz"), header.index("Rc1_excess__V_per_rtHz")
    # one element's sources are uncorrelated: their densities add in power
    np.testing.assert_allclose(elements[:, rc1] ** 2, sources[:, thermal] ** 2 + sources[:, excess] ** 2, rtol=1e-12)


def _chromium() -> str | None:
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    return None


def _headless(browser: str, profile, *args) -> subprocess.CompletedProcess:
    flags = [
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        f"--user-data-dir={profile}",
    ]
    return subprocess.run([browser, *flags, *args], capture_output=True, text=True, timeout=120, check=True)


def test_html_report_renders_offline_in_a_browser(divider, tmp_path):
    report = tmp_path / "review.html"
    assert run("analyze", divider, "--html", report, "--top", "2") == 0
    page = report.read_text(encoding="utf-8")
    # one file: nothing fetched from anywhere (no external sources, links or scripts)
    assert not re.search(r"""(src|href)\s*=\s*["'](?!#)""", page) and "<script" not in page
    browser = _chromium()
    if browser is None:
        pytest.skip("no chromium binary on this machine (CI installs Debian's chromium: .ci/install-browser)")
    profile = tmp_path / "profile"
    profile.mkdir()
    dom = _headless(browser, profile, "--dump-dom", report.as_uri()).stdout
    # the escaped title, the sections as tables, the budget, the caution
    assert "divider with an excess-noise resistor &amp; &lt;markup&gt; in its title" in dom
    for heading in (
        "Conditions",
        "Totals",
        "Spot output density",
        "Budget (ranked by share of output noise power)",
        "Output noise",
    ):
        assert f"<h2>{heading}</h2>" in dom
    assert "<td>Rc1</td>" in dom and "<td>R2</td>" in dom and "(1 more row)" in dom
    assert "Caution: design estimates only" in dom
    # the plots are inline SVG whose text is text: the density and integrated panels, and the input-referred one
    assert dom.count("<svg") == 2
    assert "output noise density (nV/√Hz)" in dom and "input-referred noise density" in dom and "frequency (Hz)" in dom
    # and they paint: a screenshot of the page has ink where the first figure is
    shot = tmp_path / "page.png"
    _headless(browser, profile, f"--screenshot={shot}", "--window-size=1000,2600", report.as_uri())
    import matplotlib.image

    pixels = matplotlib.image.imread(shot)[..., :3]
    dark = (pixels.mean(axis=2) < 0.5).mean(axis=1)  # fraction of dark pixels in each row
    inked_rows = np.flatnonzero(dark > 0.02)
    assert inked_rows.size > 300, "the page shows less than a figure's worth of drawing"


def test_a_noiseless_circuit_reports_zero_density_not_a_clamp(tmp_path, capsys):
    path = tmp_path / "silent.cir"
    path.write_text(SILENT)
    assert run("analyze", path) == 0
    out = capsys.readouterr().out
    assert "at   10 Hz   0 V/√Hz" in out and "e-1" not in out


def test_html_sections_keep_labels_values_and_sentences_whole(divider, tmp_path):
    report = tmp_path / "adc.html"
    assert run("analyze", divider, "--adc", "16", "4.096", "1meg", "--html", report) == 0
    page = report.read_text(encoding="utf-8")
    # a label holding two spaces stays whole; its value is the next cell
    assert re.search(r"<tr><th>LSB  q = FS / 2\^N</th><td>62.5 µV</td></tr>", page)  # 4.096 V / 2^16 (arithmetic)
    assert "<tr><th>floor set by</th>" in page
    # a sentence wrapped over two lines of the text report is one paragraph here
    remarks = re.findall(r'<p class="remark">(.*?)</p>', page)
    assert any(r.startswith("Note: the band ends at 100 kHz") and r.endswith("or to infinity).") for r in remarks), (
        remarks
    )
    assert re.findall(r'<p class="headline">(.*?)</p>', page)[0].startswith("Largest sources: Rc1 and R2 tie")
    assert page.rstrip().endswith("</html>") and page.count("Caution: design estimates only") == 1
