"""The package layout: one import name, dependencies pointing one way, only the CLI talks.

* Installed, diagap is the only top-level import name: ``import diagap`` works from any folder,
  the repository's room names (``fem``, ``lumped``, ``meshes``, ``app``) are not importable.
* The import graph, read from the source with ``ast`` (no import side effects): meshes → fem →
  lumped → application, never back. The rooms are the folders mapped in pyproject.toml:
  meshes/ = diagap.meshes, fem/ = diagap.fem, lumped/ = diagap.lumped, app/ = every other
  diagap module (the application).
* Only the command-line modules (app/cli.py, app/sweep/cli.py) print or end the process.
"""
from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent
ROOMS = {"meshes": "diagap.meshes", "fem": "diagap.fem", "lumped": "diagap.lumped",
         "app": "diagap"}
ORDER = ["meshes", "fem", "lumped", "app"]  # a room may import only rooms to its left
CLI_MODULES = {"app/cli.py", "app/sweep/cli.py", "app/studies/cli.py"}
#: process control that is not a user-facing exit: a sweep worker whose parent has died ends
#: itself (no output, no exit code anybody reads)
WORKER_EXITS = {("app/sweep/exec.py", "os._exit(")}


def _modules():
    """{relative path: (module name, room, is_package)} for every source file of diagap."""
    out = {}
    for folder, package in ROOMS.items():
        for path in sorted((REPO / folder).rglob("*.py")):
            rel = path.relative_to(REPO / folder)
            parts = list(rel.with_suffix("").parts)
            is_pkg = parts[-1] == "__init__"
            if is_pkg:
                parts = parts[:-1]
            name = ".".join([package, *parts]) if parts else package
            out[path.relative_to(REPO).as_posix()] = (name, _room_of(name), is_pkg)
    return out


def _room_of(module: str) -> str | None:
    """The room a module name belongs to; None outside diagap."""
    if module != "diagap" and not module.startswith("diagap."):
        return None
    for room in ("meshes", "fem", "lumped"):
        pkg = ROOMS[room]
        if module == pkg or module.startswith(pkg + "."):
            return room
    return "app"


def _imports(path: Path, module: str, is_pkg: bool) -> list[tuple[int, str]]:
    """(line, absolute module name) of every import statement (relative ones resolved)."""
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    package = module if is_pkg else module.rpartition(".")[0]
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found += [(node.lineno, a.name) for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            found.append((node.lineno, target))
            found += [(node.lineno, f"{target}.{a.name}") for a in node.names]
        elif (isinstance(node, ast.Call) and isinstance(node.func, (ast.Name, ast.Attribute))
              and getattr(node.func, "attr", getattr(node.func, "id", "")) == "import_module"
              and node.args and isinstance(node.args[0], ast.Constant)
              and isinstance(node.args[0].value, str)
              and node.args[0].value.startswith("diagap")):
            found.append((node.lineno, node.args[0].value))
    return found


MODULES = _modules()


def test_layout_is_discovered():
    rooms = {room for _, room, _ in MODULES.values()}
    assert rooms == set(ORDER)
    assert len(MODULES) > 40


def test_only_diagap_is_importable_from_outside_the_repository(tmp_path):
    code = ("import importlib, sys\n"
            "import diagap, diagap.fem, diagap.lumped, diagap.meshes\n"
            "bad = []\n"
            "for name in ('fem', 'lumped', 'meshes', 'app'):\n"
            "    try:\n"
            "        importlib.import_module(name)\n"
            "    except ImportError:\n"
            "        continue\n"
            "    bad.append(name)\n"
            "print(','.join(bad))\n")
    proc = subprocess.run([sys.executable, "-c", code], cwd=tmp_path, capture_output=True,
                          text=True, env=_env_without_repo())
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == "", f"importable top-level names: {proc.stdout.strip()}"


def _env_without_repo():
    import os

    env = dict(os.environ)
    env.pop("PYTHONPATH", None)
    return env


def test_no_module_imports_the_old_top_level_names():
    old = {"fem", "lumped", "meshes", "app"}
    bad = [f"{rel}:{line} imports {target}"
           for rel, (name, _, pkg) in MODULES.items()
           for line, target in _imports(REPO / rel, name, pkg)
           if target.split(".")[0] in old]
    assert not bad, "\n".join(bad)


def test_import_graph_points_one_way():
    bad = []
    for rel, (name, room, pkg) in MODULES.items():
        allowed = set(ORDER[: ORDER.index(room) + 1])
        for line, target in _imports(REPO / rel, name, pkg):
            other = _room_of(target)
            if other == "app" and target in ("diagap",) and room != "app":
                bad.append(f"{rel}:{line} imports the application package {target}")
            elif other is not None and other not in allowed:
                bad.append(f"{rel}:{line} ({room}) imports {target} ({other})")
    assert not bad, "\n".join(bad)


@pytest.mark.parametrize("source,room,target", [
    ("from diagap.lumped.model import LumpedModel", "fem", "lumped"),
    ("from diagap.fem.air import air_properties", "meshes", "fem"),
    ("import diagap.design", "lumped", "app"),
    ("from ..design import Design", "lumped", "app"),
])
def test_graph_check_catches_a_backward_import(tmp_path, source, room, target):
    # the checker itself can fail: a planted backward import is reported
    f = tmp_path / "planted.py"
    f.write_text(source + "\n")
    module = {"meshes": "diagap.meshes.x", "fem": "diagap.fem.plate.x",
              "lumped": "diagap.lumped.x"}[room]
    targets = [t for _, t in _imports(f, module, False)]
    assert any(_room_of(t) == target for t in targets), targets


def _talks(tree: ast.AST) -> list[tuple[int, str]]:
    hits = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            f = node.func
            if isinstance(f, ast.Name) and f.id in ("print", "exit", "quit"):
                hits.append((node.lineno, f"{f.id}("))
            elif (isinstance(f, ast.Attribute) and isinstance(f.value, ast.Name)
                  and (f.value.id, f.attr) in (("sys", "exit"), ("os", "_exit"))):
                hits.append((node.lineno, f"{f.value.id}.{f.attr}("))
        elif isinstance(node, ast.Raise) and node.exc is not None:
            exc = node.exc.func if isinstance(node.exc, ast.Call) else node.exc
            if isinstance(exc, ast.Name) and exc.id == "SystemExit":
                hits.append((node.lineno, "raise SystemExit"))
    return sorted(hits)


def test_only_the_cli_prints_or_exits():
    bad = [f"{rel}:{line}: {what}"
           for rel in MODULES if rel not in CLI_MODULES
           for line, what in _talks(ast.parse((REPO / rel).read_text(encoding="utf-8")))
           if (rel, what) not in WORKER_EXITS]
    assert not bad, "\n".join(bad)
    # the check sees what it looks for
    assert _talks(ast.parse("import sys\nprint(1)\nsys.exit(2)\nraise SystemExit(3)\n")) == [
        (2, "print("), (3, "sys.exit("), (4, "raise SystemExit")]
    for rel in CLI_MODULES:
        assert (REPO / rel).exists(), rel


def test_tests_use_relative_tolerances():
    # tests must be able to fail: pytest.approx keeps an absolute tolerance of 1e-12 unless told
    # otherwise, np.allclose/np.isclose one of 1e-8 — either accepts any capacitance (~1e-12 F)
    # or noise PSD (~1e-12 Pa²/Hz) as equal to any other. Every call states its absolute
    # tolerance (abs=0 / atol=0 for SI values; tests/checks.py has relative helpers).
    bad = []
    for path in sorted((REPO / "tests").rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if not isinstance(node, ast.Call):
                continue
            name = ast.unparse(node.func)
            kws = {k.arg for k in node.keywords}
            if name.endswith("approx") and name in ("pytest.approx", "approx") and "abs" not in kws:
                bad.append(f"{path.relative_to(REPO)}:{node.lineno}: {name} without abs=")
            elif name in ("np.allclose", "np.isclose", "numpy.allclose", "numpy.isclose") \
                    and "atol" not in kws:
                bad.append(f"{path.relative_to(REPO)}:{node.lineno}: {name} without atol=")
    assert not bad, "\n".join(bad)


def test_session_uses_a_fresh_temporary_cache(diagap_cache_dir):
    # tests/conftest.py: the whole session (and every subprocess it starts) uses a temporary
    # cache folder, never the user's platform cache
    import os
    import tempfile

    from diagap.meshes.cache import cache_dir

    assert Path(diagap_cache_dir).name.startswith("diagap-test-cache-")
    assert Path(diagap_cache_dir).parent == Path(tempfile.gettempdir())
    assert cache_dir() == Path(diagap_cache_dir)
    proc = subprocess.run([sys.executable, "-c", "from diagap.meshes.cache import cache_dir; "
                           "print(cache_dir())"], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == diagap_cache_dir
    assert os.environ["DIAGAP_CACHE_DIR"] == diagap_cache_dir


def test_every_package_folder_is_installed():
    # a folder with an __init__.py that pyproject.toml does not list would work in an editable
    # install and be missing from a regular one
    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib
    listed = set(tomllib.loads((REPO / "pyproject.toml").read_text(encoding="utf-8"))
                 ["tool"]["setuptools"]["packages"])
    rooms = {"app": "diagap", "fem": "diagap.fem", "lumped": "diagap.lumped",
             "meshes": "diagap.meshes"}
    found = set()
    for folder, name in rooms.items():
        for init in (REPO / folder).rglob("__init__.py"):
            rel = init.parent.relative_to(REPO / folder).parts
            found.add(".".join((name, *rel)))
    assert found == listed, (found - listed, listed - found)
