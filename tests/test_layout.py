"""The package layout: stages import only from earlier stages, no import circles, small files.

Every import is read from the source with ``ast``, including imports inside functions, so a
lazy import cannot hide a circle. The stage order is the flow of data (common practice for a
layered package):

    leaves (_io, _version, config) -> input -> model -> engines -> analysis -> runs -> render
    -> plan -> api -> demo_pipeline -> cli

Analysis sits before runs because the analysers are functions of plain arrays that a sweep
calls on each point; they never read a run folder. Render (figures and movies of run folders)
sits before the plan, which draws its own figures with render's layout helpers.
"""

import ast
from pathlib import Path

import pytest

PKG = Path(__file__).resolve().parents[1] / "thinfilm"
ORDER = ["leaf", "input", "model", "engines", "analysis", "runs", "render", "plan", "api",
         "demo_pipeline", "cli_lab", "cli", "top"]
LEAVES = {"thinfilm._io", "thinfilm._numbers", "thinfilm._version", "thinfilm.config"}
MAX_LINES = 420


def _modules():
    mods = {}
    for p in PKG.rglob("*.py"):
        parts = list(p.relative_to(PKG.parent).with_suffix("").parts)
        is_pkg = parts[-1] == "__init__"
        if is_pkg:
            parts = parts[:-1]
        mods[".".join(parts)] = (p, is_pkg)
    return mods


MODULES = _modules()


def _stage(mod):
    if mod in LEAVES:
        return ORDER.index("leaf")
    parts = mod.split(".")
    if len(parts) == 1 or parts[1] == "__main__":
        return ORDER.index("top")
    return ORDER.index(parts[1])


def _imports(mod):
    path, is_pkg = MODULES[mod]
    tree = ast.parse(path.read_text(encoding="utf-8"))
    base = mod.split(".") if is_pkg else mod.split(".")[:-1]
    out = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out |= {a.name for a in node.names if a.name.split(".")[0] == "thinfilm"}
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                src = ".".join(base[: len(base) - node.level + 1]
                               + ([node.module] if node.module else []))
            else:
                src = node.module or ""
            if src.split(".")[0] != "thinfilm":
                continue
            for a in node.names:
                sub = f"{src}.{a.name}"
                out.add(sub if sub in MODULES else src)
    return {m for m in out if m in MODULES and m != mod}


GRAPH = {m: _imports(m) for m in MODULES}


@pytest.mark.parametrize("mod", sorted(MODULES))
def test_imports_only_from_earlier_stages(mod):
    bad = [d for d in GRAPH[mod] if _stage(d) > _stage(mod)]
    assert not bad, f"{mod} (stage {ORDER[_stage(mod)]}) imports later stages: {bad}"


def test_no_import_circles():
    state, stack, circles = {}, [], []

    def visit(m):
        state[m] = 1
        stack.append(m)
        for d in sorted(GRAPH[m]):
            if state.get(d) == 1 and not (d == "thinfilm" or m == "thinfilm"):
                circles.append(stack[stack.index(d):] + [d])
            elif d not in state:
                visit(d)
        stack.pop()
        state[m] = 2

    for m in sorted(GRAPH):
        if m not in state:
            visit(m)
    assert not circles, f"import circles: {circles}"


def test_nothing_imports_the_demo():
    users = [m for m, deps in GRAPH.items() if "thinfilm.demo_pipeline" in deps]
    assert set(users) <= {"thinfilm", "thinfilm.cli"}, users


def test_no_module_is_long():
    long = {m: n for m, (p, _) in MODULES.items()
            if (n := len(p.read_text(encoding="utf-8").splitlines())) > MAX_LINES}
    assert not long, f"modules over {MAX_LINES} lines (split them by responsibility): {long}"


def test_layering_check_can_fail():
    # the checker itself: a later-stage import is seen (render is after analysis)
    assert _stage("thinfilm.render.plots") > _stage("thinfilm.analysis.thermo")
    assert "thinfilm.analysis.instrument" in GRAPH["thinfilm.render.frames"]
