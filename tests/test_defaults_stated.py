"""Defaults and silent joins a designer must hear about (issue 14, class 2)."""

from __future__ import annotations

import pytest

import netnoise
from netnoise.errors import NetlistError


def _notes(text):
    return [str(n) for n in netnoise.analyze(netnoise.parse_netlist(text), band=(1.0, 1e3)).notes]


def test_an_amplifier_without_gain_or_bandwidth_says_which_defaults_it_runs_on():
    text = ".model bare opamp en=5n\nV1 in 0 ac 1\nR1 in m 1k\nR2 m out 10k\nXU1 0 m out bare\n.noise v(out) V1\n"
    notes = _notes("amp\n" + text)
    said = [n for n in notes if "XU1" in n and "defaults" in n]
    assert len(said) == 1 and "aol=100000" in said[0] and "gbw=1e+06 Hz" in said[0]
    full = "amp\n.model part opamp en=5n aol=1e6 gbw=10meg\nV1 in 0 ac 1\nR1 in m 1k\nR2 m out 10k\nXU1 0 m out part\n"
    assert not any("defaults" in n for n in _notes(full + ".noise v(out) V1\n"))


def test_shot_noise_of_a_zero_current_is_stated():
    notes = _notes("pd\nI1 0 a 0 shot\nR1 a 0 1meg\n.noise v(a)\n")
    assert any("I1" in n and "DC current is 0 A" in n for n in notes)


def test_a_top_level_node_spelled_like_an_internal_one_is_refused():
    text = "joins\n.subckt stage a b\nR1 a mid 1k\nR2 mid b 1k\n.ends\nV1 in 0 ac 1\nX1 in out stage\nR3 x1.mid 0 1k\nR4 out 0 1k\n"
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist(text)
    assert "x1.mid" in str(info.value) and "inside instance X1" in str(info.value)
    assert info.value.location.line == 8  # R3, the line after the title and the six before it
    fine = text.replace("R3 x1.mid 0 1k", "R3 x1_mid 0 1k")
    assert len(netnoise.parse_netlist(fine).elements) == 5  # V1, X1.R1, X1.R2, R3, R4


@pytest.mark.parametrize("temperature", [1e300, 2e5])
def test_a_temperature_beyond_any_circuits_is_refused(temperature):
    from netnoise.errors import UsageError

    with pytest.raises(UsageError, match="beyond any circuit"):
        netnoise.analyze(
            netnoise.parse_netlist("rc\nR1 a 0 1k\nC1 a 0 1n\n"), output="a", temperature_celsius=temperature
        )
    with pytest.raises(NetlistError, match="beyond any part"):
        netnoise.parse_netlist(f"rc\nR1 a 0 1k temp={temperature!r}\nC1 a 0 1n\n")
