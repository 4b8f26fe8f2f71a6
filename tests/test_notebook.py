"""Issue 15: netnoise in a notebook, without magics.  A small notebook is run
by nbclient on a real python3 kernel (ipykernel); its saved outputs must hold
the budget table, a short text repr, a PNG image for the plot, a pandas
table, and nothing on stderr (no warning, no traceback)."""

from __future__ import annotations

import base64

import pytest

nbformat = pytest.importorskip("nbformat", reason="the test extra installs nbformat")
nbclient = pytest.importorskip("nbclient", reason="the test extra installs nbclient")

#: An invented two-stage scenario: a 4.7 kΩ source resistance into a 1 nF
#: filter capacitor, then a 100 kΩ bias resistor; the input is V1.
NETLIST = """\
bias network & <filter> for a notebook check
V1   in   0    DC 0 AC 1
Rs   in   mid  4.7k
C1   mid  0    1n
Rb   mid  out  100k
Rl   out  0    1meg
.noise v(out) V1 dec 10 10 1meg
.end
"""

CELLS = [
    f"import netnoise\nresult = netnoise.analyze(netnoise.parse_netlist({NETLIST!r}))\nresult",
    "netnoise.plot_noise(result, top=3)",
    "result.to_dataframe()[['label', 'rms_V', 'share']]",
    "print(repr(result)); print(result.source('Rs').rank == [c.source for c in result.contributions].index('Rs') + 1)",
]


def test_a_notebook_shows_the_budget_the_plot_and_a_table(tmp_path, monkeypatch):
    monkeypatch.delenv("MPLBACKEND", raising=False)  # the kernel's own default, as in a notebook server
    notebook = nbformat.v4.new_notebook(cells=[nbformat.v4.new_code_cell(source) for source in CELLS])
    client = nbclient.NotebookClient(
        notebook, kernel_name="python3", timeout=120, resources={"metadata": {"path": str(tmp_path)}}
    )
    client.execute()
    outputs = [cell.outputs for cell in notebook.cells]
    for cell_outputs in outputs:
        assert not [o for o in cell_outputs if o.output_type == "error"], cell_outputs
        assert not [o for o in cell_outputs if o.output_type == "stream" and o.name == "stderr"], cell_outputs

    (budget,) = [o for o in outputs[0] if o.output_type == "execute_result"]
    table = budget.data["text/html"]
    assert "bias network &amp; &lt;filter&gt; for a notebook check" in table and "<table" in table
    assert "<td>Rs</td>" in table and "<td>Rb</td>" in table and "<td>Rl</td>" in table
    short = budget.data["text/plain"]
    assert short.startswith("<NoiseResult 'bias network & <filter> for a notebook check'") and len(short) < 200

    (figure,) = [o for o in outputs[1] if o.output_type == "execute_result"]
    png = base64.b64decode(figure.data["image/png"])
    assert png.startswith(b"\x89PNG") and len(png) > 10_000
    assert figure.data["text/plain"].startswith("<NoisePlot: 2 axes")
    # no pyplot figure shown beside it: the one image is ours
    assert not [o for o in outputs[1] if o.output_type == "display_data"]

    (frame,) = [o for o in outputs[2] if o.output_type == "execute_result"]
    assert "<table" in frame.data["text/html"] and "rms_V" in frame.data["text/html"]

    printed = "".join(o.text for o in outputs[3] if o.output_type == "stream")
    lines = printed.splitlines()
    assert lines[0].startswith("<NoiseResult") and "dominant" in lines[0]
    assert lines[1] == "True"
