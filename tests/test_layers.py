"""The package's layers import one way only (the architecture in DEVELOPERS.md).

Reads every module's imports (top-level and inside functions) with the ast
module and checks that none reaches a layer above its own.
"""

import ast
from pathlib import Path

import radsolve

PACKAGE = Path(radsolve.__file__).parent

# Lowest first: a module may import its own layer and those listed before it.
LAYERS = ["errors", "units", "potentials", "core", "output", "analysis", "cli"]


def _layer(module: str) -> str | None:
    parts = module.split(".")
    if parts[0] != "radsolve" or len(parts) < 2:
        return None
    return parts[1] if parts[1] in LAYERS else None


def _imports(path: Path):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            if node.module == "radsolve":  # from radsolve import potentials / solve
                for alias in node.names:
                    yield node.lineno, f"radsolve.{alias.name}"
            else:
                yield node.lineno, node.module
        elif isinstance(node, ast.Import):
            for alias in node.names:
                yield node.lineno, alias.name


def _module_files():
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(PACKAGE)
        if len(rel.parts) == 1 and rel.stem in ("__init__", "__main__", "registry"):
            continue  # the front door and the 0.1 shim sit above every layer
        yield path, rel


def test_every_module_belongs_to_a_layer():
    strays = [str(rel) for path, rel in _module_files() if (rel.parts[0].removesuffix(".py")) not in LAYERS]
    assert not strays, f"modules outside the layers {LAYERS}: {strays}"


def test_no_relative_imports():
    # Absolute imports make each file's layer dependencies readable at a glance.
    found = []
    for path, rel in _module_files():
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.ImportFrom) and node.level:
                found.append(f"{rel}:{node.lineno}")
    assert not found, f"relative imports: {found}"


def test_imports_point_down():
    wrong = []
    for path, rel in _module_files():
        own = LAYERS.index(rel.parts[0].removesuffix(".py"))
        for line, module in _imports(path):
            if module == "radsolve" or module.startswith("radsolve.") and _layer(module) is None:
                # radsolve/__init__ is the front door: it imports every layer lazily.
                wrong.append(f"{rel}:{line} imports the front door ({module})")
                continue
            layer = _layer(module)
            if layer is not None and LAYERS.index(layer) > own:
                wrong.append(f"{rel}:{line} ({LAYERS[own]}) imports {module} ({layer})")
    assert not wrong, "imports that point up:\n" + "\n".join(wrong)


def test_the_check_sees_a_violation(tmp_path):
    # The walker must catch an import inside a function, the kind most easily missed.
    source = tmp_path / "m.py"
    source.write_text("def f():\n    from radsolve.cli.app import app\n")
    assert ("radsolve.cli.app" in [m for _, m in _imports(source)])
