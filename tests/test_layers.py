"""The layers labcheck is built on, and the one direction imports may go.

Each layer is a folder of ``labcheck/`` (DEVELOPERS.md, "Layers"), from the bottom: base and the pure
reductions; the methods (steps, mistakes); the model (spec, chain, uncertainty); reading (files,
workbooks, rows to a submission, identity); grading (verdicts, diagnosis, adjustments, integrity, tune,
diff); report (results, gradebook, sheets, PDFs); run (a section's batch); course (the course record);
demo; cli.  A module may import its own layer and the layers below, never above: a test over every
import in the package, including those inside functions, keeps the picture from drifting.
"""

import ast
from pathlib import Path

import labcheck

LAYERS = [
    ("base", {"labcheck", "labcheck.base", "labcheck.reductions", "labcheck.demo.common"}),
    ("methods", {"labcheck.methods"}),
    ("model", {"labcheck.model"}),
    ("reading", {"labcheck.reading"}),
    ("grading", {"labcheck.grading"}),
    ("report", {"labcheck.report"}),
    ("run", {"labcheck.run"}),
    ("course", {"labcheck.course"}),
    ("demo", {"labcheck.demo"}),
    ("cli", {"labcheck.cli"}),
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


# Installed, the shipped specs and templates are packages of data beside the code (pyproject.toml).
DATA_PACKAGES = {"lab_specs", "report_templates"}


def test_the_tree_shows_the_layers():
    """No module sits loose in labcheck/: each is in the folder of its layer, and each folder has a layer."""
    root = Path(labcheck.__file__).parent
    loose = sorted(f.name for f in root.glob("*.py") if f.name != "__init__.py")
    assert not loose, f"modules outside a layer's folder: {loose}"
    folders = sorted(d.name for d in root.iterdir()
                     if d.is_dir() and (d / "__init__.py").exists() and d.name not in DATA_PACKAGES)
    for name in folders:
        _layer(f"labcheck.{name}")


def test_every_module_says_what_it_holds():
    """Every module opens with a docstring (what it holds; a package's says what it may import)."""
    root = Path(labcheck.__file__).parent
    for f in sorted(root.rglob("*.py")):
        if f.name == "spa_terms.py":  # generated data (its generator's docstring explains it)
            continue
        doc = ast.get_docstring(ast.parse(f.read_text(encoding="utf-8")))
        assert doc and len(doc) > 20, f"{f.relative_to(root)} has no opening docstring"
        if f.name == "__init__.py" and f.parent != root and f.parent.name not in DATA_PACKAGES:
            assert "import" in doc, f"{f.relative_to(root)}: a layer's docstring says what it may import"


# The only number formatting below the report layer, and why each is not display of a grade.
FORMATTING_ALLOWED = {
    ("grading/grade.py", "transposed_digits"),  # the diagnosis compares digits as written: a test, not display
    ("model/spec.py", "_range_words"),  # a spec author's error message (SpecError), not a student's record
    ("model/schema.py", "_default_words"),  # docs/spec.md's tables, generated from the declaration
    ("model/schema.py", "_limits_words"),
}


def test_no_module_below_the_report_layer_formats_a_value():
    """Grading and everything below it hand over numbers, units and angles as data (labcheck.base.phrase);
    the report layer's view model (labcheck.report.words) words them: no f-string format spec, and no
    formatter (they live in labcheck/report/words.py), below the report layer."""
    root = Path(labcheck.__file__).parent
    found = []
    for sub in ("base", "reductions", "methods", "model", "reading", "grading"):
        for f in sorted((root / sub).rglob("*.py")):
            rel = str(f.relative_to(root))
            tree = ast.parse(f.read_text(encoding="utf-8"))
            for func in [n for n in ast.walk(tree) if isinstance(n, (ast.FunctionDef, ast.AsyncFunctionDef))] + [tree]:
                name = getattr(func, "name", "<module>")
                body = ast.walk(func) if name != "<module>" else (n for n in tree.body if not isinstance(
                    n, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)) for n in ast.walk(n))
                for node in body:
                    if isinstance(node, ast.FormattedValue) and node.format_spec is not None \
                            and (rel, name) not in FORMATTING_ALLOWED:
                        found.append(f"{rel}:{node.lineno} in {name}: {ast.unparse(node)}")
    for f in sorted(root.rglob("*.py")):
        if f.parent.name in ("base", "reductions", "methods", "model", "reading", "grading"):
            text = f.read_text(encoding="utf-8")
            for formatter in ("def format_value", "def format_fixed", "def format_dms"):
                assert formatter not in text, f"{f.relative_to(root)} defines {formatter[4:]}: it belongs to report/words.py"
    assert not found, "values formatted below the report layer:\n" + "\n".join(sorted(set(found)))
