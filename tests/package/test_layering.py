"""The headless core imports no widget library, and the arrows of the layout point down."""
import ast
import pathlib
import subprocess
import sys

PACKAGE = pathlib.Path(__file__).resolve().parents[2] / "diskexplorer"
# Which of our subpackages each layer may import (DESIGN.md §4: physics imports nothing of ours).
ALLOWED = {
    "physics": {"physics", "errors"},
    "dust": {"dust", "physics", "errors"},
    "observables": {"observables", "physics", "dust", "errors"},
    "data": {"data", "errors"},
    "fitting": {"fitting", "observables", "physics", "dust", "data", "errors"},
    "report": {"report", "fitting", "observables", "physics", "dust", "data", "errors"},
}


def test_core_import_loads_no_widgets():
    code = ("import sys, diskexplorer, diskexplorer.physics, diskexplorer.observables, diskexplorer.dust, "
            "diskexplorer.data, diskexplorer.fitting, diskexplorer.report, diskexplorer.sample, diskexplorer.cli\n"
            "bad = [m for m in sys.modules if m.split('.')[0] in ('ipywidgets', 'bqplot', 'voila', 'traitlets', 'IPython')]\n"
            "print(','.join(bad))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def test_report_imports_matplotlib_only_to_draw():
    code = ("import sys, diskexplorer.report, diskexplorer.report.figures, diskexplorer.cli\n"
            "print(','.join(m for m in sys.modules if m.split('.')[0] == 'matplotlib'))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def _our_imports(path):
    tree = ast.parse(path.read_text())
    found = set()
    parts = path.relative_to(PACKAGE).parts
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level == 0 and node.module and node.module.startswith("diskexplorer."):
                found.add(node.module.split(".")[1])
            elif node.level >= 1:
                base = list(parts[:-1])[: len(parts) - node.level] if node.level > 1 else list(parts[:-1])
                target = (base + (node.module.split(".") if node.module else []))
                if target:
                    found.add(target[0])
                else:
                    found.update(a.name.split(".")[0] for a in node.names)
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.startswith("diskexplorer."):
                    found.add(alias.name.split(".")[1])
    return found


def test_arrows_point_down():
    problems = []
    for layer, allowed in ALLOWED.items():
        for path in (PACKAGE / layer).rglob("*.py"):
            extra = _our_imports(path) - allowed
            if extra:
                problems.append(f"{path.relative_to(PACKAGE)} imports {sorted(extra)}")
    assert not problems, problems


def test_only_app_imports_widget_libraries():
    offenders = []
    for path in PACKAGE.rglob("*.py"):
        if path.relative_to(PACKAGE).parts[0] == "app":
            continue
        text = path.read_text()
        for lib in ("ipywidgets", "bqplot"):
            if f"import {lib}" in text or f"from {lib}" in text:
                offenders.append(str(path))
    assert not offenders


def _dust_module_imports(path):
    """Modules of diskexplorer.dust that ``path`` imports anywhere (deferred imports too)."""
    tree = ast.parse(path.read_text())
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level == 1:
                if node.module:
                    found.add(node.module.split(".")[0])
                else:
                    found.update(a.name for a in node.names)
            elif node.level == 0 and node.module and node.module.startswith("diskexplorer.dust."):
                found.add(node.module.split(".")[2])
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.startswith("diskexplorer.dust."):
                    found.add(alias.name.split(".")[2])
    return found


def test_dust_modules_import_each_other_one_way():
    # A deferred import inside a function closes a circle as surely as one at the top:
    # species.species_kappa once built a DustMix while mixture imports species.
    dust = PACKAGE / "dust"
    modules = {p.stem for p in dust.glob("*.py") if p.stem != "__init__"}
    graph = {m: _dust_module_imports(dust / f"{m}.py") & modules - {m} for m in modules}
    assert {"mixture", "species"} <= modules
    assert "mixture" not in graph["species"], "dust/species.py imports dust/mixture.py"
    cycles = []
    state = {}

    def visit(m, trail):
        state[m] = "open"
        for n in sorted(graph[m]):
            if state.get(n) == "open":
                cycles.append(" -> ".join(trail[trail.index(n):] + [n]))
            elif n not in state:
                visit(n, trail + [n])
        state[m] = "done"

    for m in sorted(modules):
        if m not in state:
            visit(m, [m])
    assert not cycles, cycles

