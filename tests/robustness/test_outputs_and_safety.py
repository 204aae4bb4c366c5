"""Nothing lost, nothing evaluated: atomic outputs, interrupted writes, inputs as data only."""

from __future__ import annotations

import ast
import json
import os
import stat
from pathlib import Path

import pytest

import plantopt.reports.io as io
from plantopt.cli import main
from plantopt.reports.io import atomic_write_bytes, write_json

from . import mutations as M

ROOT = M.ROOT


def leftovers(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.endswith(".tmp"))


# ---------------------------------------------------------------------- atomic writes
def test_interrupted_rename_keeps_the_old_file(tmp_path, monkeypatch):
    """The process dies (here: an exception) just before the rename: old file intact, no temporary file left."""
    target = tmp_path / "result.json"
    target.write_text('{"old": true}\n')

    def boom(src, dst):
        raise KeyboardInterrupt

    monkeypatch.setattr(io.os, "replace", boom)
    with pytest.raises(KeyboardInterrupt):
        write_json(target, {"new": 1})
    assert target.read_text() == '{"old": true}\n'
    assert leftovers(tmp_path) == []


def test_interrupted_write_keeps_the_old_file(tmp_path, monkeypatch):
    """A failure half-way through writing the bytes (disk full) leaves the old file and no temporary file."""
    target = tmp_path / "table.csv"
    target.write_bytes(b"old,complete\n")
    real_fdopen = os.fdopen

    class HalfWriter:
        def __init__(self, fh):
            self.fh = fh

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            self.fh.close()
            return False

        def write(self, data):
            self.fh.write(data[: len(data) // 2])
            raise OSError(28, "No space left on device")

    monkeypatch.setattr(io.os, "fdopen", lambda fd, mode: HalfWriter(real_fdopen(fd, mode)))
    with pytest.raises(OSError):
        atomic_write_bytes(target, b"new,longer,content\n" * 100)
    assert target.read_bytes() == b"old,complete\n"
    assert leftovers(tmp_path) == []


def test_failing_serializer_never_touches_the_disk(tmp_path):
    target = tmp_path / "r.json"
    target.write_text("old")
    with pytest.raises(TypeError):
        write_json(target, {"x": object()})
    assert target.read_text() == "old"
    assert leftovers(tmp_path) == []


def test_non_finite_values_become_null_not_a_lost_file(tmp_path):
    """JSON has no NaN; a failed iterate's NaN is written as null and the file stays standard JSON."""
    target = tmp_path / "r.json"
    write_json(target, {"status": "failed", "value": float("nan"), "list": [1.0, float("inf")]})
    data = json.loads(target.read_text(), parse_constant=lambda c: pytest.fail(f"non-standard token {c}"))
    assert data == {"status": "failed", "value": None, "list": [1.0, None]}


def test_new_file_gets_ordinary_permissions_and_replacement_keeps_them(tmp_path):
    fresh = tmp_path / "fresh.json"
    write_json(fresh, {"a": 1})
    umask = os.umask(0)
    os.umask(umask)
    assert stat.S_IMODE(fresh.stat().st_mode) == 0o666 & ~umask
    kept = tmp_path / "kept.json"
    kept.write_text("{}")
    kept.chmod(0o640)
    write_json(kept, {"a": 2})
    assert stat.S_IMODE(kept.stat().st_mode) == 0o640


def test_cli_failure_while_writing_keeps_the_old_result(tmp_path, monkeypatch, capsys):
    """An interrupted JSON write during a real command: old result intact, no temporary file, no traceback."""
    out = tmp_path / "inputs.json"
    out.write_text('{"old": true}')

    def boom(src, dst):
        raise OSError(5, "Input/output error", str(dst))

    monkeypatch.setattr(io.os, "replace", boom)
    code = main(["inputs", str(M.BASE_FILES["demo.toml"]), "--json", str(out)])
    err = capsys.readouterr().err
    assert code == 2 and "Traceback" not in err and "inputs.json" in err and "Input/output error" in err
    assert out.read_text() == '{"old": true}'
    assert leftovers(tmp_path) == []


def test_unwritable_output_is_refused_before_any_work(tmp_path, capsys, monkeypatch):
    """A missing output folder is found before the (slow) solve, not after it."""
    import plantopt.studies.simulate as sim

    monkeypatch.setattr(sim, "simulate", lambda *a, **k: pytest.fail("solved although the output cannot be written"))
    code = main(["simulate", str(M.BASE_FILES["demo.toml"]), "--json", str(tmp_path / "no" / "r.json")])
    err = capsys.readouterr().err
    assert code == 2
    assert f"{tmp_path / 'no' / 'r.json'}: --json: folder '{tmp_path / 'no'}' does not exist" in err


# ---------------------------------------------------------------------- data only
SOURCES = sorted((ROOT / "plantopt").rglob("*.py")) + sorted((ROOT / "unitmodels").rglob("*.py"))
FORBIDDEN_CALLS = {"eval", "exec", "compile", "__import__"}
FORBIDDEN_MODULES = {"pickle", "marshal", "shelve", "dill", "cloudpickle"}
# the only dynamic imports: module names from fixed tables in the code, never from input
ALLOWED_IMPORT_MODULE = {"plantopt/cli.py", "plantopt/commands/bench.py", "plantopt/__init__.py"}


def test_no_code_evaluation_or_unpickling_anywhere():
    problems = []
    for path in SOURCES:
        rel = path.relative_to(ROOT).as_posix()
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=rel)
        for node in ast.walk(tree):
            if isinstance(node, ast.Call):
                f = node.func
                name = f.id if isinstance(f, ast.Name) else f.attr if isinstance(f, ast.Attribute) else ""
                if name in FORBIDDEN_CALLS and not (isinstance(f, ast.Attribute) and name == "compile"):
                    problems.append(f"{rel}:{node.lineno}: {name}()")
                if name == "import_module" and rel not in ALLOWED_IMPORT_MODULE:
                    problems.append(f"{rel}:{node.lineno}: import_module()")
                if name == "load" and isinstance(f, ast.Attribute) and isinstance(f.value, ast.Name) and f.value.id == "yaml":
                    problems.append(f"{rel}:{node.lineno}: yaml.load()")
            if isinstance(node, (ast.Import, ast.ImportFrom)):
                mods = [a.name for a in node.names] if isinstance(node, ast.Import) else [node.module or ""]
                for m in mods:
                    if m.split(".")[0] in FORBIDDEN_MODULES:
                        problems.append(f"{rel}:{node.lineno}: import {m}")
    assert problems == []


def test_dynamic_imports_take_names_from_fixed_tables():
    """cli.py imports plantopt.commands.<name> for the names in COMMANDS; bench imports from its BENCHES dict."""
    from plantopt.commands import COMMANDS
    from plantopt.commands.bench import BENCHES

    assert all(n.isidentifier() for n in COMMANDS)
    assert all(v.startswith("plantopt.bench.") for v in BENCHES.values())


@pytest.mark.parametrize("unit_type", ["os.system", "__import__('os')", "plantopt.cli", "__class__", "feed; rm -rf /",
                                       "unitmodels.units.reactors.CSTR", "FEED"])
def test_unit_type_is_a_registry_key_never_a_module(unit_type, tmp_path, capsys):
    text = M.BASE_FILES["demo.toml"].read_text(encoding="utf-8").replace('type = "cstr"', f"type = {json.dumps(unit_type)}")
    p = tmp_path / "t.toml"
    p.write_text(text)
    assert main(["inputs", str(p)]) == 2
    err = capsys.readouterr().err
    assert f"t.toml: units.REACTOR.type: unknown unit type {unit_type!r} (known: " in err


@pytest.mark.parametrize("name", ["../../escape", "/tmp/abs_escape", "..", "a/b/c", "CON", "x\u202ey"])
def test_flowsheet_name_never_becomes_a_file_name(name, tmp_path, capsys, monkeypatch):
    """The only files written are the ones named on the command line, whatever the flowsheet calls itself."""
    work = tmp_path / "work"
    work.mkdir()
    monkeypatch.chdir(work)
    doc = M.base_doc("utilities.toml")
    doc["flowsheet"]["name"] = name
    src = work / "in.toml"
    src.write_text(M.dumps(doc))
    before = {p for p in tmp_path.rglob("*")}
    outside = Path("/tmp/abs_escape")
    existed = outside.exists()
    out = work / "out.json"
    code = main(["simulate", str(src), "--json", str(out), "--quiet"])
    capsys.readouterr()
    assert code == 0
    after = {p for p in tmp_path.rglob("*")}
    assert after - before == {out}
    assert json.loads(out.read_text())["flowsheet_name"] == name
    assert outside.exists() == existed


def test_sigterm_during_a_solve_keeps_the_old_result(tmp_path):
    """SIGTERM while the optimizer iterates: exit 143, the earlier result file untouched, no temporary file."""
    import signal
    import subprocess
    import sys

    out = tmp_path / "result.json"
    out.write_text('{"old": true}\n')
    proc = subprocess.Popen([sys.executable, "-u", "-m", "plantopt.cli", "optimize", str(M.BASE_FILES["demo.toml"]),
                             "--verbose", "--json", str(out)], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        header = proc.stdout.readline()  # printed by the solver: the handler is installed and work is under way
        assert header.startswith("iter"), header + proc.stderr.read()
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=120)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 143, err
    assert "Traceback" not in err
    assert out.read_text() == '{"old": true}\n'
    assert leftovers(tmp_path) == []


def test_write_refused_after_termination_was_requested(tmp_path):
    """A SIGTERM whose exception an extension module swallowed still stops every later output write."""
    from plantopt.reports.io import atomic_write_text, request_termination

    out = tmp_path / "result.json"
    out.write_text('{"old": true}\n')
    request_termination()
    try:
        with pytest.raises(SystemExit) as exc:
            atomic_write_text(out, '{"new": true}\n')
        assert exc.value.code == 143
    finally:
        request_termination(False)
    assert out.read_text() == '{"old": true}\n'
    assert leftovers(tmp_path) == []
    atomic_write_text(out, '{"new": true}\n')  # cleared: writes go through again
    assert out.read_text() == '{"new": true}\n'
