"""Hostile inputs (issue 14, round 2): every input ends in a result or a
NetnoiseError with a clean message -- never a traceback, a warning or a hang.

* a table of hostile inputs run through the command line (exit status and
  message fragments);
* a hypothesis fuzz over mutated shipped circuits;
* the classes behind the table, each tested on its own: file kinds, sizes,
  include confinement, grid sizes, memory limits, output files, the parser
  cache's ownership checks, the grammar's portability.
"""

from __future__ import annotations

import os
import pickle
import stat
import subprocess
import sys
from pathlib import Path

import pytest

from netnoise import cli

REPO = Path(__file__).resolve().parent.parent
EXAMPLES = sorted((REPO / "circuits").glob("*.cir"))


# ---- the parser cache: pickle runs code, so only a private cache is used


class _Plant:
    """A pickle that, when loaded, creates the folder ``marker``."""

    def __init__(self, marker: str) -> None:
        self.marker = marker

    def __reduce__(self):
        return (os.mkdir, (self.marker,))


def _fresh_parse(cache_home: Path) -> tuple[str, str]:
    code = (
        "import netnoise; from netnoise.text.grammar import parser_cache_path; "
        "c = netnoise.parse_netlist('t\\nR1 a 0 1k\\nC1 a 0 {2p}\\n'); "
        "print(len(c.elements), parser_cache_path())"
    )
    env = {**os.environ, "XDG_CACHE_HOME": str(cache_home)}
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True)
    assert out.stderr == ""
    count, path = out.stdout.split()
    return count, path


_BUILT: dict[str, Path] = {}


def _cache_file_name(cache_home: Path) -> Path:
    """A good cache in ``cache_home``: built in a fresh process once per test
    session, then copied (a process start costs a second)."""
    import shutil

    if "home" not in _BUILT:
        import atexit
        import tempfile

        home = Path(tempfile.mkdtemp(prefix="netnoise-built-cache-"))
        atexit.register(shutil.rmtree, home, True)
        count, path = _fresh_parse(home)
        assert count == "2" and path != "None"
        _BUILT["home"], _BUILT["file"] = home, Path(path)
    built = _BUILT["file"]
    folder = cache_home / built.parent.name
    shutil.copytree(built.parent, folder)  # keeps the modes (0700)
    return folder / built.name


def _plant(path: Path, marker: Path) -> None:
    path.write_bytes(b"0" * 64 + b"\n" + pickle.dumps(_Plant(str(marker))))


def test_cache_folder_is_created_private(tmp_path):
    count, path = _fresh_parse(tmp_path)
    assert count == "2" and Path(path).is_file()
    assert stat.S_IMODE(Path(path).parent.stat().st_mode) == 0o700


def test_a_cache_folder_writable_by_others_is_not_used(tmp_path):
    cache = _cache_file_name(tmp_path)
    marker = tmp_path / "pwned"
    _plant(cache, marker)
    os.chmod(cache.parent, 0o777)
    count, path = _fresh_parse(tmp_path)
    assert count == "2" and path == "None"
    assert not marker.exists()


def test_a_cache_file_writable_by_others_is_not_loaded(tmp_path):
    cache = _cache_file_name(tmp_path)
    marker = tmp_path / "pwned"
    _plant(cache, marker)
    os.chmod(cache, 0o666)
    count, path = _fresh_parse(tmp_path)
    assert count == "2" and path == "None"
    assert not marker.exists()


def test_a_cache_file_owned_by_another_user_is_not_loaded(tmp_path):
    if os.getuid() != 0:
        pytest.skip("giving a file to another uid needs root (os.chown); CI runs as root")
    cache = _cache_file_name(tmp_path)
    marker = tmp_path / "pwned"
    _plant(cache, marker)
    os.chown(cache, 12345, 12345)
    count, path = _fresh_parse(tmp_path)
    assert count == "2" and path == "None"
    assert not marker.exists()


def test_a_cache_folder_owned_by_another_user_is_not_used(tmp_path):
    if os.getuid() != 0:
        pytest.skip("giving a folder to another uid needs root (os.chown); CI runs as root")
    cache = _cache_file_name(tmp_path)
    marker = tmp_path / "pwned"
    _plant(cache, marker)
    os.chown(cache.parent, 12345, 12345)
    count, path = _fresh_parse(tmp_path)
    assert count == "2" and path == "None"
    assert not marker.exists()


def test_a_cache_file_that_is_a_link_is_not_loaded(tmp_path):
    cache = _cache_file_name(tmp_path)
    marker = tmp_path / "pwned"
    elsewhere = tmp_path / "elsewhere"
    _plant(elsewhere, marker)
    cache.unlink()
    cache.symlink_to(elsewhere)
    count, path = _fresh_parse(tmp_path)
    assert count == "2" and path == "None"
    assert not marker.exists()


def test_the_planted_pickle_would_run_if_loaded(tmp_path):
    # the payload is real: loading it creates the marker (so the tests above prove something)
    marker = tmp_path / "pwned"
    _plant(tmp_path / "f", marker)
    with open(tmp_path / "f", "rb") as handle:
        handle.readline()
        pickle.load(handle)
    assert marker.exists()


# ---- the grammar is portable: no regex features some supported Pythons mismatch


def test_grammar_has_no_possessive_quantifiers_or_atomic_groups():
    import re

    from netnoise.text.grammar import grammar_text

    patterns = re.findall(r"/(?:[^/\n\\]|\\.)+/", grammar_text())
    assert patterns
    for pattern in patterns:
        assert not re.search(r"[*+?}]\+", pattern.replace("\\+", "")), pattern
        assert "(?>" not in pattern, pattern


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_every_shipped_circuit_parses(path):
    from netnoise.netlist import load_netlist

    assert load_netlist(path).elements


# ---- the hostile-input table, through the command line


def _write(folder: Path, name: str, text: str) -> Path:
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


RC = "rc\nV1 in 0 1\nR1 in out 1k\nC1 out 0 1n\n.noise v(out) V1 dec 10 10 100k\n"


def _rc(folder: Path) -> str:
    return str(_write(folder, "rc.cir", RC))


def _including(folder: Path, target: str) -> str:
    return str(_write(folder, "inc.cir", RC + f".include {target}\n"))


def _link_loop(folder: Path) -> str:
    (folder / "loop1").symlink_to("loop2")
    (folder / "loop2").symlink_to("loop1")
    return "loop1"


def _fifo(folder: Path) -> str:
    os.mkfifo(folder / "pipe")
    return str(folder / "pipe")


def _deep_chain(folder: Path, levels: int = 500) -> str:
    lines = ["deep chain"]
    for i in range(levels):
        lines += [f".subckt s{i} a b", "R1 a b 1k", *([f"X1 a b s{i + 1}"] if i + 1 < levels else []), ".ends"]
    lines += ["V1 in 0 1", "R0 in out 1k", "X1 out 0 s0", ".noise v(out) V1 dec 10 1 1k"]
    return str(_write(folder, "deep.cir", "\n".join(lines) + "\n"))


def _exploding(folder: Path) -> str:
    lines = ["ten to the eighth", ".subckt s0 a b", "R1 a b 1k", ".ends"]
    for i in range(1, 9):
        lines += [f".subckt s{i} a b", *(f"X{j} a b s{i - 1}" for j in range(10)), ".ends"]
    lines += ["V1 in 0 1", "R0 in out 1k", "Xtop out 0 s8", ".noise v(out) V1 dec 10 1 1k"]
    return str(_write(folder, "huge.cir", "\n".join(lines) + "\n"))


def _sparse(folder: Path, size: int) -> str:
    path = folder / "big.cir"
    with open(path, "wb") as handle:
        handle.write(b"big\n")
        handle.truncate(size)  # sparse: takes no disk space, and must never be read
    return str(path)


def _binary(folder: Path) -> str:
    secret = folder / "secret.bin"
    secret.write_bytes(b"TOKEN=" + b"s" * 5000 + b"\x00" + b"x" * 5000 + b"\nSECOND_LINE_SECRET\n")
    return _including(folder, str(secret))


def _text_secret(folder: Path) -> str:
    secret = folder / "shadow"
    secret.write_text("root:$6$" + "h" * 3000 + ":19000:0:99999:7:::\nnext_line_secret\n")
    return _including(folder, str(secret))


def _outside(folder: Path) -> list[str]:
    (folder / "in").mkdir()
    (folder / "out.inc").write_text("R9 out 0 1meg\n")
    path = _write(folder / "in", "inc.cir", RC + ".include ../out.inc\n")
    return [str(path), "--confine-includes"]


def _linked_outside(folder: Path) -> list[str]:
    (folder / "in").mkdir()
    (folder / "out.inc").write_text("R9 out 0 1meg\n")
    (folder / "in" / "lib.inc").symlink_to(folder / "out.inc")  # inside by name, outside by target
    path = _write(folder / "in", "inc.cir", RC + ".include lib.inc\n")
    return [str(path), "--confine-includes"]


def _inside(folder: Path) -> list[str]:
    (folder / "lib").mkdir()
    (folder / "lib" / "r.inc").write_text("R9 out 0 1meg\n")
    return [str(_write(folder, "inc.cir", RC + ".include lib/r.inc\n")), "--confine-includes"]


HOSTILE = [
    # (id, arguments from a tmp folder, exit status, fragments of standard error)
    ("include-link-loop", lambda d: [_including(d, _link_loop(d))], 2, ["loop of symbolic links"]),
    ("netlist-link-loop", lambda d: [str(d / _link_loop(d))], 2, ["loop of symbolic links"]),
    ("include-device", lambda d: [_including(d, "/dev/zero")], 2, ["is a device"]),
    ("include-folder", lambda d: [_including(d, str(d))], 2, ["is a folder"]),
    ("include-fifo", lambda d: [_including(d, _fifo(d))], 2, ["is a FIFO"]),
    ("netlist-fifo", lambda d: [_fifo(d)], 2, ["is a FIFO", "regular file"]),
    ("netlist-device", lambda d: ["/dev/zero"], 2, ["is a device"]),
    ("netlist-folder", lambda d: [str(d)], 2, ["is a folder"]),
    ("netlist-stdin", lambda d: ["-"], 2, ["'-' (standard input) is not read; give a netlist file"]),
    ("netlist-8GB", lambda d: [_sparse(d, 8 * 2**30)], 2, ["8,589,934,592 bytes", "over the limit of", "MiB"]),
    ("deep-subcircuits", lambda d: [_deep_chain(d)], 2, ["nested more than 100 deep", "s0 -> s1", "s100"]),
    ("1e8-elements", lambda d: [_exploding(d)], 2, ["100,000,002", "would expand to", "limit of 5,000,000", "'s8'"]),
    ("points-1e20", lambda d: [_rc(d), "--points", "99999999999999999999"], 2, ["would need", "points", "--points"]),
    (
        "dec-1e12",
        lambda d: [str(_write(d, "n.cir", RC.replace("dec 10", "dec 999999999999")))],
        2,
        ["would need 3,999,999,999,996 points", "limit of 1,000,000"],
    ),
    ("band-1e-300-1e300", lambda d: [_rc(d), "--band", "1e-300", "1e300", "--points", "2"], 0, []),
    ("adc-overflow", lambda d: [_rc(d), "--adc", "1", "1e308", "1e-300"], 2, ["--adc RANGE", "1e308"]),
    ("adc-rate", lambda d: [_rc(d), "--adc", "1", "1", "1e-300"], 2, ["--adc RATE"]),
    ("signal-huge", lambda d: [_rc(d), "--signal", "1e300"], 0, []),
    ("usage-one-line", lambda d: [_rc(d), "--points", "many"], 2, ["argument --points", "usage:"]),
    ("unknown-option", lambda d: [_rc(d), "--frobnicate"], 2, ["unrecognized arguments: --frobnicate"]),
    ("underflow", lambda d: [str(_write(d, "u.cir", RC.replace("1k", "1e-400")))], 2, ["underflows", "1e-400"]),
    ("subnormal", lambda d: [str(_write(d, "s.cir", RC.replace("1k", "1e-310")))], 2, ["underflows", "1e-310"]),
    (
        "subnormal-expression",
        lambda d: [str(_write(d, "e.cir", RC.replace("1k", "{1e-300*1e-10}")))],
        2,
        ["underflows"],
    ),
    ("temp-nan", lambda d: [_rc(d), "--temp", "nan"], 2, ["is not a number"]),
    ("temp-inf", lambda d: [_rc(d), "--temp=-inf"], 2, ["finite"]),
    (
        "k-digits",
        lambda d: [str(_write(d, "k.cir", RC + "L1 out 0 1m\nL2 x 0 1m\nR2 x 0 1k\nK1 L1 L2 1.0000001\n"))],
        2,
        ["not 1.0000001"],
    ),
    ("cr-only", lambda d: [str(_write(d, "cr.cir", RC.replace("\n", "\r")))], 0, []),
    ("long-option", lambda d: [_rc(d), "--temp", "x" * 100_000], 2, ["characters left out"]),
    ("long-option-argparse", lambda d: [_rc(d), "--points", "9" * 50_000 + "x"], 2, ["characters left out"]),
    ("binary-include", _binary, 2, ["NUL character"]),
    ("text-secret-include", _text_secret, 2, []),
    ("confined-outside", _outside, 2, ["outside the folder includes are confined to"]),
    ("confined-link-outside", _linked_outside, 2, ["outside the folder includes are confined to"]),
    ("confined-inside", _inside, 0, []),
    ("negative-exponent", lambda d: [_rc(d), "--temp", "-1e3"], 2, ["expected one argument", "--temp=-1e3"]),
    ("output-link-loop", lambda d: [_rc(d), "--json", str(d / _link_loop(d))], 2, ["--json", "symbolic links"]),
]


@pytest.mark.parametrize("make, status, fragments", [row[1:] for row in HOSTILE], ids=[row[0] for row in HOSTILE])
def test_hostile_input_table(tmp_path, capsys, make, status, fragments):
    args = make(tmp_path)
    args = [args] if isinstance(args, str) else args
    assert cli.main(["analyze", *args]) == status
    out, err = capsys.readouterr()
    if status == 0:
        assert err == "" and out.startswith("Noise budget")
        return
    assert out == ""
    lines = err.splitlines()
    assert lines[0].startswith("netnoise: error: ") and "internal error" not in err and "Traceback" not in err
    assert all(len(line) <= 500 for line in lines), max(map(len, lines))
    assert len(err) < 2500
    for fragment in fragments:
        assert fragment in err
    assert "SECOND_LINE_SECRET" not in err and "next_line_secret" not in err  # never past the offending line


def test_argparse_errors_are_one_line(tmp_path, capsys):
    for args in ([], ["analyze"], ["analyze", _rc(tmp_path), "--adc", "16", "5"], ["analyze", "--band", "1"]):
        assert cli.main(args) == 2
        err = capsys.readouterr().err
        assert err.startswith("netnoise: error: ") and err.count("\n") == 1, err


# ---- file kinds, sizes and confinement, through the API


def test_size_is_checked_before_reading(tmp_path, monkeypatch):
    from netnoise.errors import NetlistError
    from netnoise.netlist import load_netlist
    from netnoise.text import source

    path = Path(_sparse(tmp_path, 2000))
    monkeypatch.setattr(source, "MAX_NETLIST_BYTES", 1000)
    read = []
    monkeypatch.setattr(os, "read", lambda *a: read.append(a) or b"")
    with pytest.raises(NetlistError, match="2,000 bytes, over the limit of 1,000 bytes"):
        load_netlist(path)
    assert read == []


def test_a_file_that_reports_no_size_is_read_only_up_to_the_limit(monkeypatch):
    from netnoise.errors import NetlistError
    from netnoise.netlist import load_netlist
    from netnoise.text import source

    monkeypatch.setattr(source, "MAX_NETLIST_BYTES", 100)
    with pytest.raises(NetlistError, match="more than 100 bytes"):
        load_netlist("/proc/self/maps")  # size 0 in stat, longer when read


def test_includes_within_confines_the_api(tmp_path):
    from netnoise.errors import NetlistError
    from netnoise.netlist import load_netlist, parse_netlist

    args = _linked_outside(tmp_path)
    with pytest.raises(NetlistError, match="outside the folder"):
        load_netlist(args[0], includes_within=Path(args[0]).parent)
    assert len(load_netlist(args[0]).elements) == 4  # unconfined: read
    with pytest.raises(NetlistError, match="outside the folder"):
        parse_netlist(RC + ".include /etc/hostname\n", base_dir=tmp_path, includes_within=tmp_path)
    nested = tmp_path / "nested"
    nested.mkdir()
    (nested / "a.inc").write_text(".include ../../b.inc\n")  # the second level reaches out
    with pytest.raises(NetlistError, match="outside the folder"):
        parse_netlist(RC + ".include nested/a.inc\n", base_dir=tmp_path, includes_within=tmp_path)


def test_a_fifo_is_never_waited_on(tmp_path):
    # no writer ever opens it: a blocking open or read would hang the test
    from netnoise.errors import NetlistError
    from netnoise.netlist import load_netlist

    with pytest.raises(NetlistError, match="is a FIFO"):
        load_netlist(_fifo(tmp_path))


@pytest.mark.parametrize("ending", ["\r", "\r\n", "\n"])
def test_line_endings_read_alike(ending):
    from netnoise.netlist import parse_netlist

    circuit = parse_netlist(RC.replace("\n", ending))
    assert [e.name for e in circuit.elements] == ["V1", "R1", "C1"]
    assert circuit.noise_card is not None


# ---- values: underflow, and messages that show the value as written


@pytest.mark.parametrize("text", ["1e-400", "1e-310", "-2.5e-320", "1e-300f", "0.00001e-305"])
def test_values_that_underflow_are_refused(text):
    from netnoise.text.values import parse_value

    with pytest.raises(ValueError, match="underflows"):
        parse_value(text)


@pytest.mark.parametrize("text, value", [("0", 0.0), ("0e-400", 0.0), ("0.000e-999", 0.0), ("2.3e-308", 2.3e-308)])
def test_zero_and_the_smallest_normal_values_are_read(text, value):
    from netnoise.text.values import parse_value

    assert parse_value(text) == value


def test_exact_shows_every_digit_needed():
    from hypothesis import given
    from hypothesis import strategies as st

    from netnoise.text.values import exact

    @given(st.floats(allow_nan=False, allow_infinity=False))
    def round_trips(x):
        assert float(exact(x)) == x
        assert len(exact(x)) <= max(len(f"{x:g}"), len(repr(x)))

    round_trips()
    assert exact(1.0000001) == "1.0000001" and exact(1.5) == "1.5" and exact(1e-12) == "1e-12"


def test_name_lists_are_bounded():
    from netnoise.outputs.report import name_list

    assert name_list(["R1"]) == "R1"
    assert name_list(["R1", "R2", "R3"]) == "R1, R2 and R3"
    long = name_list([f"R{i}" for i in range(10_000)])
    assert long.endswith("… and 9,990 more") and len(long) < 100


def test_message_lines_are_cut_with_a_count():
    line = cli.shorten_line("x" * 100_000)
    assert len(line) <= cli.MESSAGE_LINE_LIMIT + 20 and "99,6" in line and "characters left out" in line
    assert cli.shorten_line("short") == "short"


# ---- grid sizes


@pytest.mark.parametrize(
    "low, high, points",
    [(1.0, 1e3, 1e20), (1.0, 1e3, 999999999999), (1e-300, 1e300, 1e4), (5e-324, 1.7e308, 2000), (1.0, 1e6, 2e5)],
)
def test_huge_grids_are_refused_with_the_count(low, high, points):
    from netnoise.engine.integrate import log_grid_intervals
    from netnoise.errors import UsageError

    with pytest.raises(UsageError, match=r"would need [\d,.e+]+ points .*limit of 1,000,000"):
        log_grid_intervals(low, high, points)


def test_wide_bands_do_not_overflow():
    from netnoise.engine.integrate import log_grid_intervals

    assert log_grid_intervals(1e-300, 1e300, 20) == 12000


# ---- the memory guard: machine, address-space limit, cgroup


def test_cgroup_v2_limit_is_respected(tmp_path, monkeypatch):
    from netnoise.engine import resources

    (tmp_path / "memory.max").write_text("1073741824\n")
    (tmp_path / "memory.current").write_text("268435456\n")
    monkeypatch.setattr(resources, "CGROUP_ROOT", str(tmp_path))
    assert resources._cgroup_room() == 3 * 2**28
    assert resources.available_memory() <= 3 * 2**28
    (tmp_path / "memory.max").write_text("max\n")
    assert resources._cgroup_room() is None


def test_cgroup_v1_limit_is_respected(tmp_path, monkeypatch):
    from netnoise.engine import resources

    (tmp_path / "memory").mkdir()
    (tmp_path / "memory" / "memory.limit_in_bytes").write_text(str(2**30))
    (tmp_path / "memory" / "memory.usage_in_bytes").write_text(str(2**29))
    monkeypatch.setattr(resources, "CGROUP_ROOT", str(tmp_path))
    assert resources._cgroup_room() == 2**29
    (tmp_path / "memory" / "memory.limit_in_bytes").write_text("9223372036854771712")  # v1's "no limit"
    assert resources._cgroup_room() is None


def test_cgroup_limit_refuses_a_large_analysis(tmp_path, monkeypatch):
    from netnoise.engine import resources
    from netnoise.errors import CircuitError

    (tmp_path / "memory.max").write_text(str(2**20))
    (tmp_path / "memory.current").write_text("0")
    monkeypatch.setattr(resources, "CGROUP_ROOT", str(tmp_path))
    with pytest.raises(CircuitError, match="would need about"):
        resources.require_memory(2**21, "a test array")


def test_address_space_limit_is_respected():
    code = (
        "import resource\n"
        "from netnoise.engine import resources\n"
        "resource.setrlimit(resource.RLIMIT_AS, (4 * 2**30, resource.RLIM_INFINITY))\n"
        "room = resources._rlimit_room()\n"
        "assert room is not None and 0 < room < 4 * 2**30, room\n"
        "assert resources.available_memory() <= room\n"
        "print('ok')\n"
    )
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(p for p in (str(REPO), os.environ.get("PYTHONPATH", "")) if p)}
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, timeout=60)
    assert out.stdout.strip() == "ok", out.stderr


# ---- output files: only regular files are replaced; devices, FIFOs and links are not


def test_json_to_dev_null_leaves_a_device(tmp_path, capsys):
    assert cli.main(["analyze", _rc(tmp_path), "--json", "/dev/null", "--csv", os.devnull]) == 2  # one file twice
    capsys.readouterr()
    assert cli.main(["analyze", _rc(tmp_path), "--json", "/dev/null"]) == 0
    assert stat.S_ISCHR(os.stat("/dev/null").st_mode)
    assert not any(p.name.startswith(".null.") for p in Path("/dev").iterdir())


def test_atomic_write_to_dev_null_writes_directly():
    from netnoise.outputs.export import atomic_write

    atomic_write("/dev/null", lambda handle: handle.write("x" * 1000))
    assert stat.S_ISCHR(os.lstat("/dev/null").st_mode)


def test_output_to_a_fifo_reaches_its_reader(tmp_path, capsys):
    import threading

    fifo = tmp_path / "results.fifo"
    os.mkfifo(fifo)
    got: list[bytes] = []
    reader = threading.Thread(target=lambda: got.append(fifo.read_bytes()), daemon=True)
    reader.start()
    assert cli.main(["analyze", _rc(tmp_path), "--csv", str(fifo)]) == 0
    reader.join(timeout=30)
    assert not reader.is_alive()
    assert got and got[0].startswith(b"frequency_Hz") and len(got[0].splitlines()) > 10
    assert stat.S_ISFIFO(os.lstat(fifo).st_mode)  # still a FIFO, not replaced by a file


def test_output_through_a_link_replaces_its_target(tmp_path, capsys):
    target = tmp_path / "real.json"
    target.write_text("old")
    os.chmod(target, 0o640)
    link = tmp_path / "link.json"
    link.symlink_to(target)
    assert cli.main(["analyze", _rc(tmp_path), "--json", str(link)]) == 0
    assert link.is_symlink() and os.readlink(link) == str(target)
    assert target.read_text().startswith("{") and stat.S_IMODE(target.stat().st_mode) == 0o640


def test_output_through_a_dangling_link_creates_its_target(tmp_path, capsys):
    link = tmp_path / "link.csv"
    link.symlink_to(tmp_path / "made.csv")
    assert cli.main(["analyze", _rc(tmp_path), "--csv", str(link)]) == 0
    assert link.is_symlink() and (tmp_path / "made.csv").read_text().startswith("frequency_Hz")


def test_an_unwritable_output_folder_is_refused_before_the_report(tmp_path, capsys, monkeypatch):
    folder = tmp_path / "locked"
    folder.mkdir()
    real_access = os.access
    monkeypatch.setattr(
        os, "access", lambda p, mode, **k: False if str(p) == str(folder) else real_access(p, mode, **k)
    )
    assert cli.main(["analyze", _rc(tmp_path), "--json", str(folder / "r.json")]) == 2
    out, err = capsys.readouterr()
    assert out == "" and "cannot write in the folder" in err  # nothing printed, nothing computed
    assert not (folder / "r.json").exists()


def test_an_output_that_is_a_folder_is_refused(tmp_path, capsys):
    from netnoise.outputs.export import atomic_write

    assert cli.main(["analyze", _rc(tmp_path), "--json", str(tmp_path)]) == 2
    assert "is a folder" in capsys.readouterr().err
    with pytest.raises(IsADirectoryError):
        atomic_write(tmp_path, lambda handle: handle.write("x"))


# ---- numerics the engine lets through never reach the user raw


def _engine_that(monkeypatch, action):
    from netnoise.engine import analysis

    real = analysis.analyze

    def analyze(*args, **kwargs):
        result = real(*args, **kwargs)
        action()
        return result

    monkeypatch.setattr(analysis, "analyze", analyze)


@pytest.mark.parametrize(
    "action, words",
    [
        (lambda: 10.0**400, "Numerical result out of range"),  # Python's float ** raises OverflowError
        (lambda: __import__("numpy").square(__import__("numpy").float64(1e300)), "overflow encountered"),
        (lambda: __import__("numpy").sqrt(__import__("numpy").float64(-1.0)), "invalid value"),
    ],
    ids=["OverflowError", "numpy-overflow", "numpy-invalid"],
)
def test_out_of_range_arithmetic_is_a_clean_error(tmp_path, capsys, monkeypatch, action, words):
    _engine_that(monkeypatch, action)
    out_file = tmp_path / "r.json"
    assert cli.main(["analyze", _rc(tmp_path), "--json", str(out_file)]) == 1
    out, err = capsys.readouterr()
    assert out == "" and not out_file.exists()
    assert err.startswith("netnoise: error: the arithmetic went out of range") and words in err
    assert err.count("\n") == 1 and "Warning" not in err


# ---- the fuzz: mutated shipped circuits, bands, temperatures and grid sizes
#
# Every input ends in a result whose figures are finite and non-negative, or a
# NetnoiseError: never another exception, never a warning (pytest turns them
# into errors, and the check below does too), never a hang (an alarm fails the
# example after 60 s).
#
# Constrained for now, because the engine's own numerics are being reworked by
# another change (netnoise/engine/analysis.py, total_variance.py, noise_sources.py):
# element values of 1e30 or more (2**1000, 1e300) and normal ones of 1e-30 or
# less (1e-300), band edges beyond 1e-3 Hz .. 1e12 Hz, and temperatures above
# 1e4 °C make densities overflow inside the engine (RuntimeWarnings, or an
# OverflowError from R**2 in noise_sources.excess_sources); the command line
# already turns those into a clean CircuitError (tested above).  Widen these
# lists when the engine handles them.

import math as _math
import re as _re
import signal as _signal
import warnings as _warnings

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

FUZZ_VALUES = [
    "0",
    "-1",
    "1e-400",
    "1e-310",
    "1e-15",
    "1f",
    "1",
    "1k",
    "1meg",
    "1e12",
    "inf",
    "nan",
    "1kk",
    "{1/0}",
    "{1e-200*1e-200}",
    "{-1}",
    "1M",
    "abc",
    "{0}",
    "1e",
    "-1e-3",
    "{2**60}",
    "1e-9",
    "1.0000001",
    "10kOhm",
]
FUZZ_BANDS = [
    None,
    ("0", "inf"),
    ("1", "1k"),
    ("0", "1e9"),
    ("1e-3", "1e9"),
    ("10", "10.0000001"),
    ("1", "1"),
    ("20", "20k"),
    ("1k", "10"),
    ("-1", "1"),
    ("1", "nan"),
    ("1e-3", "1e12"),
]
FUZZ_TEMPS = [None, "-273.15", "-273.14", "-273", "27", "1e3", "nan", "inf", "-inf", "125", "abc"]
FUZZ_POINTS = [None, 1, 2, 3, 7, 20, 40]
FUZZ_TOKENS = [
    "",
    "0",
    "gnd",
    "x",
    "V1",
    "{",
    "=",
    "noise=1n",
    "ni=-10",
    "shot",
    "quiet",
    "noiseless",
    "m=2",
    "tc=1,2",
    "4k7",
    "1M5",
    "v(a)",
    "+",
    "dec",
    "lin 3",
]
_VALUE_SPOT = _re.compile(r"(?<=\s)(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?[A-Za-zµΩ]*(?=\s|$)")
_WORD_SPOT = _re.compile(r"(?<=\s)\S+(?=\s|$)")
_SHIPPED_TEXTS = {path.name: path.read_text(encoding="utf-8") for path in EXAMPLES}


def _mutate(text: str, data) -> str:
    for _ in range(data.draw(st.integers(1, 3), label="mutations")):
        kind = data.draw(st.sampled_from(["value", "value", "token"]), label="kind")
        spots = [m.span() for m in (_VALUE_SPOT if kind == "value" else _WORD_SPOT).finditer(text)]
        if not spots:
            continue
        start, end = spots[data.draw(st.integers(0, len(spots) - 1), label="where")]
        new = data.draw(st.sampled_from(FUZZ_VALUES if kind == "value" else FUZZ_TOKENS), label="new")
        text = text[:start] + new + text[end:]
    return text


class _Hang(Exception):
    pass


def _alarm(signum, frame):
    raise _Hang("no answer within 60 s")


def _figures_ok(result) -> None:
    import numpy as np

    figures = [result.total_rms, result.total_variance]
    figures += [x for c in result.contributions for x in (c.rms_V, c.share)]
    figures += list(np.ravel(result.output_density)) + list(np.ravel(result.cumulative_rms))
    bad = [x for x in figures if not (_math.isfinite(x) and x >= 0)]
    assert not bad, f"{len(bad)} figures not finite and non-negative, e.g. {bad[:3]}"


@settings(max_examples=60, deadline=None, suppress_health_check=list(HealthCheck), derandomize=True)
@given(
    name=st.sampled_from(sorted(_SHIPPED_TEXTS)),
    data=st.data(),
    band=st.sampled_from(FUZZ_BANDS),
    temp=st.sampled_from(FUZZ_TEMPS),
    points=st.sampled_from(FUZZ_POINTS),
)
def test_fuzz_mutated_shipped_circuits(name, data, band, temp, points):
    import netnoise
    from netnoise.errors import NetnoiseError

    text = _mutate(_SHIPPED_TEXTS[name], data)
    previous = _signal.signal(_signal.SIGALRM, _alarm)
    _signal.alarm(60)
    try:
        with _warnings.catch_warnings():
            _warnings.simplefilter("error")
            circuit = netnoise.parse_netlist(text, filename=str(REPO / "circuits" / name))
            result = netnoise.analyze(
                circuit,
                band=cli.parse_band(band),
                temperature_celsius=cli.parse_temperature(temp),
                points_per_decade=points,
            )
            netnoise.format_report(result)
            netnoise.result_to_dict(result)
            _figures_ok(result)
    except NetnoiseError:
        pass
    finally:
        _signal.alarm(0)
        _signal.signal(_signal.SIGALRM, previous)


# the grammar's WORDS and PLAIN_LINE once used possessive quantifiers; the
# portable ones must match exactly what those matched (where re gets them right)
_POSSESSIVE = {
    "PLAIN_LINE": r"""[A-Za-z_][^\s=(){},"']*+(?:[^\S\n]++[^\s=(){},"']++)*+[^\S\n]*+(?!(?:\n[^\S\n]*+)++\+)(?:\n[^\S\n]*+)++""",
    "WORDS": r"""(?:[^\S\n]++[^\s=(){},"']++(?![^\S\n]*+[=(]))++""",
}


@pytest.mark.skipif(
    sys.version_info < (3, 11, 5),
    reason="this Python's re mismatches possessive quantifiers (the bug the portable grammar avoids), "
    "so it cannot serve as the reference here",
)
@pytest.mark.parametrize("terminal", sorted(_POSSESSIVE))
def test_portable_terminals_match_what_the_possessive_ones_did(terminal):
    import re

    from hypothesis import given, settings
    from hypothesis import strategies as st

    from netnoise.text.grammar import grammar_text

    portable = re.compile(re.search(rf"{terminal}\.\d: /(.*)/\n", grammar_text()).group(1))
    possessive = re.compile(_POSSESSIVE[terminal])

    @settings(max_examples=250, deadline=None, derandomize=True)
    @given(
        st.lists(
            st.sampled_from([" ", "\t", "\n", "a", "R1", "b", "=", "(", ")", "+", ",", "'", "1k", "\r"]), max_size=30
        ).map("".join),
        st.integers(0, 3),
    )
    def same(text, start):
        expected = possessive.match(text, min(start, len(text)))
        got = portable.match(text, min(start, len(text)))
        assert (got and got.span()) == (expected and expected.span()), repr(text)

    same()
