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



WIDGET_LIBRARIES = ("ipywidgets", "bqplot", "anywidget", "bqscales")
HEADLESS_ROOMS = ("app/state", "app/serving/server.py")


def _imported_libraries(path):
    """Top-level names of every module ``path`` imports, deferred imports included."""
    found = set()
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            found.add(node.module.split(".")[0])
        elif isinstance(node, ast.Import):
            found.update(a.name.split(".")[0] for a in node.names)
    return found


def test_the_explorers_headless_room_imports_no_widget_library():
    files = [p for room in HEADLESS_ROOMS for p in ((PACKAGE / room).rglob("*.py") if (PACKAGE / room).is_dir()
                                                    else [PACKAGE / room])]
    assert len(files) >= 10, files   # the room exists and the walk found it
    offenders = {str(p.relative_to(PACKAGE)): sorted(_imported_libraries(p) & set(WIDGET_LIBRARIES)) for p in files}
    assert not {k: v for k, v in offenders.items() if v}
    # Imported for real, with everything they import in turn (the package's __init__ too).
    code = ("import sys, diskexplorer.app, diskexplorer.app.state, diskexplorer.app.serving.server\n"
            "import diskexplorer.app.state.explorer_state, diskexplorer.app.state.sessions\n"
            "import diskexplorer.app.state.data_view, diskexplorer.app.state.jobs\n"
            f"print(','.join(m for m in sys.modules if m.split('.')[0] in {WIDGET_LIBRARIES!r}))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def _scene_assignments(path):
    """Lines of ``path`` that assign ``<something>.scene = ...`` (or setattr(..., "scene", ...))."""
    lines = []
    for node in ast.walk(ast.parse(path.read_text())):
        targets = node.targets if isinstance(node, ast.Assign) else [node.target] if isinstance(
            node, (ast.AugAssign, ast.AnnAssign)) else []
        for t in targets:
            if isinstance(t, ast.Attribute) and t.attr == "scene" and not (
                    isinstance(t.value, ast.Name) and t.value.id == "self"):
                lines.append(node.lineno)
        if isinstance(node, ast.Call) and getattr(node.func, "id", None) == "setattr" and len(node.args) >= 2 \
                and isinstance(node.args[1], ast.Constant) and node.args[1].value == "scene":
            lines.append(node.lineno)
    return lines


def test_only_the_state_assigns_its_scene():
    # Every change of the scene goes through an ExplorerState method (which builds a new,
    # validated scene); pages, controls and the explorer call those methods.
    state_module = PACKAGE / "app" / "state" / "explorer_state.py"
    assert "self.scene = " in state_module.read_text()
    offenders = {str(p.relative_to(PACKAGE)): _scene_assignments(p) for p in (PACKAGE / "app").rglob("*.py")
                 if p != state_module}
    assert not {k: v for k, v in offenders.items() if v}, offenders


def test_scene_assignment_finder_finds_one(tmp_path):
    probe = tmp_path / "probe.py"
    probe.write_text("def f(state, s):\n    state.scene = s\n    setattr(state, 'scene', s)\n    self.scene = s\n")
    assert _scene_assignments(probe) == [2, 3]
