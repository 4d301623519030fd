"""The package's layers point inwards only, and no import closes a cycle.

Every ``import`` of every module under ``gapmatch/`` is read with :mod:`ast` (imports
inside functions included: a lazy import is still a dependency; imports under
``if TYPE_CHECKING:`` excluded: they never run). A module may import modules of its own
layer or of layers below it, never above; within a layer the imports must not form a
cycle. The layer table is the architecture of the contributor guide, written out.
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PKG = ROOT / "gapmatch"

#: first name below ``gapmatch`` -> layer (higher layers may import lower ones)
LAYERS = {
    # foundations: errors, units, the schema language, the physics core, file readers
    "errors": 0,
    "units": 0,
    "schema": 0,
    "runtime": 0,  # process settings (the allocator), no physics
    "core": 1,
    "io": 2,
    "cluster": 2,  # sending chunks of work to Dask: knows no physics
    "templates": 0,  # data files only
    # what a user describes, and the checked front that solves it
    "limits": 3,
    "model": 3,
    "device": 3,
    "results": 3,
    "jv": 3,
    "api": 3,
    "": 3,  # gapmatch/__init__.py: the public front
    # analyses built on the front
    "search": 4,
    "maps": 4,
    "energy": 4,
    "roadmap": 4,
    "materials": 4,
    "study": 4,
    "study_reference": 4,  # the key reference of study and roadmap files
    # reporting, then the command line
    "report": 5,
    "cli": 6,
    "__main__": 6,
}


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def _is_package(name: str) -> bool:
    return (ROOT / Path(*name.split(".")) / "__init__.py").is_file()


def _exists(name: str) -> bool:
    p = ROOT / Path(*name.split("."))
    return p.with_suffix(".py").is_file() or (p / "__init__.py").is_file()


def _type_checking_nodes(tree: ast.AST) -> set[int]:
    skip: set[int] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.If) and "TYPE_CHECKING" in ast.unparse(node.test):
            for sub in node.body:
                skip.update(id(n) for n in ast.walk(sub))
    return skip


def _imports(path: Path) -> set[str]:
    """gapmatch modules imported by the module at ``path``."""
    name = _module_name(path)
    package = name if _is_package(name) else name.rpartition(".")[0]
    tree = ast.parse(path.read_text(encoding="utf-8"))
    skip = _type_checking_nodes(tree)
    out: set[str] = set()
    for node in ast.walk(tree):
        if id(node) in skip:
            continue
        if isinstance(node, ast.Import):
            out.update(a.name for a in node.names if a.name.split(".")[0] == "gapmatch")
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - (node.level - 1)]
                mod = ".".join(base + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            if mod.split(".")[0] != "gapmatch":
                continue
            for a in node.names:  # ``from pkg import submodule`` imports the submodule
                sub = f"{mod}.{a.name}"
                out.add(sub if _exists(sub) else mod)
    out.discard(name)
    return out


def _graph() -> dict[str, set[str]]:
    return {_module_name(p): _imports(p) for p in sorted(PKG.rglob("*.py"))}


def _layer(module: str) -> int:
    parts = module.split(".")
    key = parts[1] if len(parts) > 1 else ""
    if key not in LAYERS:
        raise AssertionError(f"{module}: not in the layer table of tests/test_layers.py")
    return LAYERS[key]


def test_every_module_has_a_layer():
    for m in _graph():
        _layer(m)


def test_imports_point_inwards():
    outward = [
        f"{m} (layer {_layer(m)}) imports {d} (layer {_layer(d)})"
        for m, deps in _graph().items()
        for d in sorted(deps)
        if _layer(d) > _layer(m)
    ]
    assert not outward, "imports that point outwards:\n" + "\n".join(outward)


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on: set[str] = set()
    found: list[list[str]] = []
    counter = [0]

    def visit(v: str) -> None:
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in graph.get(v, ()):
            if w not in graph:
                continue
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                found.append(sorted(comp))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return found


def test_no_import_cycles():
    cycles = _cycles(_graph())
    assert not cycles, "import cycles: " + "; ".join(" <-> ".join(c) for c in cycles)


def test_the_checker_sees_a_planted_cycle_and_an_outward_import():
    # the checks above must be able to fail
    g = {
        "gapmatch.study": {"gapmatch.report.sections"},
        "gapmatch.report.sections": {"gapmatch.study"},
    }
    assert _cycles(g) == [["gapmatch.report.sections", "gapmatch.study"]]
    assert _layer("gapmatch.report.sections") > _layer("gapmatch.study")
    assert "gapmatch.report.context" in _imports(PKG / "report" / "sections.py")
    assert "gapmatch.study" in _imports(PKG / "report" / "context.py")


@pytest.mark.parametrize("forbidden", ["optuna", "plotly"])
def test_parsing_a_study_loads_neither_optuna_nor_plotly(forbidden):
    code = (
        "import sys, gapmatch.study\n"
        'st = gapmatch.study.parse_study(\'[study]\\nname = "t"\\ntitle = "t"\\n\')\n'
        "assert st.name == 't'\n"
        f"print({forbidden!r} in sys.modules)\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True
    )
    assert out.stdout.strip() == "False"


def test_help_lists_every_command_without_importing_them():
    # ``gapmatch --help`` must not import the sub-command modules (start-up time); the
    # one-line help it shows is the one each sub-command registers
    code = (
        "import sys, contextlib, io\n"
        "from gapmatch.cli import main\n"
        "buf = io.StringIO()\n"
        "with contextlib.redirect_stdout(buf), contextlib.suppress(SystemExit):\n"
        "    main(['--help'])\n"
        "loaded = sorted(m for m in sys.modules if m.startswith('gapmatch.cli.') "
        "and m != 'gapmatch.cli.commands')\n"
        "heavy = [m for m in ('numpy', 'pandas', 'scipy', 'optuna', 'plotly') "
        "if m in sys.modules]\n"
        "print(loaded, heavy)\n"
        "print(buf.getvalue())\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True
    ).stdout
    assert out.splitlines()[0] == "[] []"
    from gapmatch.cli import build_parser
    from gapmatch.cli.commands import COMMANDS

    full = build_parser()  # every sub-command registered in full
    actions = next(a for a in full._actions if a.dest == "command")
    flat = "".join(out.split())  # argparse wraps long help lines (also at hyphens)
    for name, help_ in COMMANDS.items():
        assert name in flat and "".join(help_.split()) in flat
        assert name in actions.choices
        assert actions._choices_actions[list(COMMANDS).index(name)].help == help_


def test_evaluate_loads_only_what_it_uses():
    # start-up of ``gapmatch evaluate``: optuna, plotly, pandas, pvlib (the G173 table is
    # read from pvlib's data file directly) and scipy.stats stay unloaded
    code = (
        "import sys, contextlib, io\n"
        "from gapmatch.cli import main\n"
        "with contextlib.redirect_stdout(io.StringIO()):\n"
        "    main(['evaluate', '--gaps', '1.63', '0.96', '--json'])\n"
        "print([m for m in ('optuna', 'plotly', 'pandas', 'pvlib', 'scipy.stats') "
        "if m in sys.modules])\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True
    )
    assert out.stdout.strip() == "[]"


def test_a_report_without_search_does_not_load_optuna():
    code = (
        "import sys\n"
        "from gapmatch.report import build_report\n"
        "from gapmatch.study import parse_study\n"
        'st = parse_study(\'[study]\\nname = "t"\\ntitle = "t"\\nsections = ["stacks"]\\n'
        '[[stacks]]\\nname = "a"\\ngaps_eV = [1.7, 1.1]\\n\')\n'
        "build_report(st, progress=False)\n"
        "print('optuna' in sys.modules)\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True
    )
    assert out.stdout.strip() == "False"
