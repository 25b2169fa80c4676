"""Untrusted netlists: nothing in one may run a command or load code through the simulator.

The constructs are those measured live on ngspice 39 (DEVELOPERS.md, "Simulator notes").  Each test
writes a netlist whose command would create a marker file, shows that derate refuses it with
exit 2 and a file:line message, and that the marker never appears.  Two positive controls run
ngspice itself on the same text to show the threat is real.
"""

from __future__ import annotations

import os
import shutil
import subprocess

import pytest

from derate.cli import main
from derate.errors import UnsafeNetlistError
from derate.netlist import ReadOptions, load_circuit

BASE = "untrusted\nV1 a 0 1\nR1 a 0 1k\n"


def _cases(marker):
    m = str(marker)
    return {
        # control text is read with an allow-list (netlist/control.py): refused at the command's line
        "control-block": (BASE + f".control\nshell touch {m}\n.endc\n.end\n", 5),
        "control-uppercase-continued": (BASE + f".CONTROL\nSHELL touch\n+ {m}\n.ENDC\n.end\n", 5),
        "control-source": (BASE + ".control\ntran 1u 1m\nsource evil.cir\nrun\n.endc\n.end\n", 6),
        "control-write-to-path": (BASE + f".control\nwrdata {m} v(a)\n.endc\n.end\n", 5),
        "control-backquote-in-unknown": (BASE + f".control\nfrobnicate `touch {m}`\n.endc\n.end\n", 5),
        "control-set-sourcepath-spaced": (BASE + ".control\nset color0 = white sourcepath = ( /tmp )\n.endc\n.end\n", 5),
        "control-gnuplot-to-path": (BASE + f".control\ngnuplot {m} v(a)\n.endc\n.end\n", 5),
        "control-set-unixcom": (BASE + ".control\nset unixcom\n.endc\n.end\n", 5),
        "star-hash-load": (BASE + "*# codemodel /tmp/evil.cm\n.end\n", 4),
        "star-hash": (BASE + f"*# shell touch {m}\n.end\n", 4),
        "star-hash-indented": (BASE + f"   *#shell touch {m}\n.end\n", 4),
        "pre-command": (BASE + f"pre_shell touch {m}\n.end\n", 4),
        "backquote": (BASE + f".param x=`touch {m}`\n.end\n", 4),
        "codemodel": (BASE + "codemodel /tmp/evil.cm\n.end\n", 4),
        "source": (BASE + "source evil.cir\n.end\n", 4),
        "shell-word": (BASE + f"shell touch {m}\n.end\n", 4),
        "set-unixcom": (BASE + "set unixcom\n.end\n", 4),
        "write": (BASE + f"wrdata {m} v(a)\n.end\n", 4),
        "gnuplot": (BASE + f"gnuplot {m} v(a)\n.end\n", 4),
        "aspice": (BASE + "aspice evil.cir\n.end\n", 4),
        "filesource-model": (BASE + "A1 %v([a]) fs\n.model fs filesource(file=\"/etc/passwd\")\n.end\n", 5),
        "d-source-model": (BASE + "A1 [a] ds\n.model ds d_source(input_file=\"x.txt\")\n.end\n", 5),
    }


@pytest.mark.parametrize("case", sorted(_cases("m")))
def test_refused_and_marker_never_appears(tmp_path, case, capsys):
    marker = tmp_path / "pwned"
    text, line = _cases(marker)[case]
    path = tmp_path / "evil.cir"
    path.write_text(text)
    with pytest.raises(UnsafeNetlistError) as info:
        load_circuit(path)
    assert info.value.line == line and info.value.file.endswith("evil.cir")
    assert main(["lint", str(path)]) == 2
    err = capsys.readouterr().err
    assert "unsafe netlist" in err and f"evil.cir:{line}" in err
    assert not marker.exists()


def test_control_commands_that_cannot_change_the_analysis_are_ignored_with_a_note(tmp_path):
    """ngspice is the judge of what it can run: derate never runs a control block, so a command it does
    not know, a display `set` written with spaces round '=' and a plot to a plain name are noted, not
    refused (DESIGN.md, "Untrusted input")."""
    path = tmp_path / "plots.cir"
    path.write_text(BASE + ".control\nset color0 = white\nset gnuplot_terminal=png/quiet\n"
                    "frobnicate now\ngnuplot plotfile v(a)\ntran 1u 1m\n.endc\n.end\n")
    circuit = load_circuit(path)
    notes = " ".join(text for _, text in circuit.netlist.notes)
    assert "'frobnicate' ignored" in notes and "gnuplot" in notes
    assert "unsafe" not in notes


def test_unsafe_construct_inside_an_include_is_found(tmp_path):
    (tmp_path / "lib.inc").write_text(f"R9 a 0 1\n.control\nshell touch {tmp_path / 'pwned'}\n.endc\n")
    top = tmp_path / "top.cir"
    top.write_text(BASE + ".include lib.inc\n.end\n")
    with pytest.raises(UnsafeNetlistError) as info:
        load_circuit(top)
    assert info.value.file.endswith("lib.inc") and info.value.line == 3


def test_includes_confined_to_project_root(tmp_path):
    outside = tmp_path / "outside.inc"
    outside.write_text("R9 a 0 1\n")
    project = tmp_path / "project"
    project.mkdir()
    top = project / "top.cir"
    for spelled in ("../outside.inc", str(outside), "sub/../../outside.inc"):
        top.write_text(BASE + f".include {spelled}\n.end\n")
        with pytest.raises(UnsafeNetlistError, match="leaves the project root"):
            load_circuit(top)
    # a symlink inside the project that points outside is outside too
    (project / "link.inc").symlink_to(outside)
    top.write_text(BASE + ".include link.inc\n.end\n")
    with pytest.raises(UnsafeNetlistError, match="leaves the project root"):
        load_circuit(top)
    # allowed on request
    c = load_circuit(top, ReadOptions(allow_outside_includes=True))
    assert "R9" in [e.path for e in c.elements]
    assert main(["lint", "--allow-outside-includes", str(top)]) == 0
    assert main(["lint", str(top)]) == 2


def test_allow_control_accepts_but_never_runs(tmp_path):
    marker = tmp_path / "pwned"
    path = tmp_path / "ctl.cir"
    path.write_text(BASE + f".control\nshell touch {marker}\n.endc\n*# shell touch {marker}\n.end\n")
    c = load_circuit(path, ReadOptions(allow_control=True))
    assert [e.path for e in c.elements] == ["V1", "R1"]
    assert c.netlist.notes  # the ignored block is noted
    assert not marker.exists()


@pytest.mark.ngspice
@pytest.mark.parametrize("case", ["control-block", "star-hash"])
def test_positive_control_ngspice_itself_runs_these(tmp_path, case):
    """The same text really runs a command in ngspice 39 batch mode (so refusing it matters)."""
    ngspice = shutil.which("ngspice")
    assert ngspice, "ngspice is not installed; run `make test`"
    marker = tmp_path / "pwned"
    text, _ = _cases(marker)[case]
    path = tmp_path / "evil.cir"
    path.write_text(text.replace("R1 a 0 1k\n", "R1 a 0 1k\n.op\n"))
    env = dict(os.environ, HOME=str(tmp_path))
    subprocess.run([ngspice, "-b", str(path)], cwd=tmp_path, env=env, capture_output=True, timeout=60)
    assert marker.exists()
