"""The layers labcheck is built on, and the one direction imports may go (issue 10).

From the bottom: pure reductions and units; the methods (steps, mistakes); the spec, the chain and
uncertainty propagation; reading (files, workbooks, rows to a submission); grading (verdicts,
diagnosis, integrity, tune, diff); reporting (results, gradebook, sheets, templates); the run (batch,
demo); the command line.  A module may import its own layer and the layers below, never above: a test
over every import in the package, including those inside functions, keeps the picture from drifting.
"""

import ast
from pathlib import Path

import labcheck

LAYERS = [
    ("base", {"labcheck", "labcheck.reductions", "labcheck.units", "labcheck.exitcodes", "labcheck.resources",
              "labcheck.xlsx", "labcheck.demo.common"}),
    ("methods", {"labcheck.methods"}),
    ("model", {"labcheck.spec", "labcheck.chain", "labcheck.uncertainty"}),
    ("reading", {"labcheck.ingest", "labcheck.submission", "labcheck.identity"}),
    ("grading", {"labcheck.grading", "labcheck.integrity", "labcheck.labmatch", "labcheck.tune", "labcheck.compare",
                 "labcheck.adjust"}),
    ("reporting", {"labcheck.outputs", "labcheck.render", "labcheck.template", "labcheck.pdf"}),
    ("run", {"labcheck.batch", "labcheck.demo", "labcheck.course"}),
    ("cli", {"labcheck.cli", "labcheck.coursecli"}),
]


def _layer(module: str) -> int:
    best = None
    for i, (_, prefixes) in enumerate(LAYERS):
        for p in prefixes:
            if (module == p or module.startswith(p + ".")) and (best is None or len(p) > len(best[1])):
                best = (i, p)
    assert best is not None, f"{module} belongs to no layer: add it to LAYERS"
    return best[0]


def _imports():
    root = Path(labcheck.__file__).parent
    for f in sorted(root.rglob("*.py")):
        parts = f.relative_to(root.parent).with_suffix("").parts
        module = ".".join(parts[:-1] if parts[-1] == "__init__" else parts)
        package = module if f.name == "__init__.py" else module.rsplit(".", 1)[0]
        for node in ast.walk(ast.parse(f.read_text(encoding="utf-8"))):
            if isinstance(node, ast.ImportFrom) and node.level:
                base = package.split(".")[: len(package.split(".")) - node.level + 1]
                targets = [".".join(base + [node.module])] if node.module else \
                    [".".join(base + [a.name]) for a in node.names]
            elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("labcheck"):
                targets = [node.module]
            elif isinstance(node, ast.Import):
                targets = [a.name for a in node.names if a.name.startswith("labcheck")]
            else:
                continue
            for target in targets:
                yield module, target


def test_imports_go_down_the_layers_only():
    upward = [(m, t) for m, t in _imports() if _layer(t) > _layer(m)]
    assert not upward, "imports from a lower layer to a higher one: " + ", ".join(f"{m} -> {t}" for m, t in upward)


def test_every_module_has_a_layer():
    for module, target in _imports():
        _layer(module), _layer(target)
