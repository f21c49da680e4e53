"""Tests for the package's top-level public API (emulate/__init__.py)."""

import ast
import subprocess
import sys
from pathlib import Path

import pytest

import emulate


class TestPublicApi:
    @pytest.mark.parametrize("name", emulate.__all__)
    def test_every_public_name_resolves(self, name):
        assert getattr(emulate, name) is not None

    def test_unknown_name_is_an_attribute_error(self):
        with pytest.raises(AttributeError, match="no attribute 'nope'"):
            emulate.nope  # noqa: B018

    def test_import_loads_no_stage(self):
        # Importing the package must stay cheap: no stage module until a name is used.
        code = "import sys, emulate; print(sorted(m for m in sys.modules if m.startswith('emulate')))"
        out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
        assert out.stdout.strip() == "['emulate']"


MODULES = sorted(Path(emulate.__file__).parent.rglob("*.py"))


def _targets(node):
    return node.targets if isinstance(node, ast.Assign) else [node.target]


class TestEveryModuleDeclaresItsNames:
    @pytest.mark.parametrize("path", MODULES, ids=[str(p.relative_to(Path(emulate.__file__).parent)) for p in MODULES])
    def test_all_lists_only_names_the_module_defines_or_imports(self, path):
        tree = ast.parse(path.read_text())
        declared = [node for node in tree.body if isinstance(node, (ast.Assign, ast.AnnAssign))
                    and "__all__" in [getattr(t, "id", None) for t in _targets(node)]]
        assert declared, f"{path} has no __all__"
        bound = {node.name for node in tree.body if isinstance(node, (ast.FunctionDef, ast.ClassDef))}
        for node in ast.walk(tree):
            if isinstance(node, (ast.FunctionDef, ast.ClassDef)):
                continue  # a top-level one is bound above; a nested one binds nothing at module level
            elif isinstance(node, ast.Name) and isinstance(node.ctx, ast.Store):
                bound.add(node.id)
            elif isinstance(node, (ast.Import, ast.ImportFrom)):
                bound |= {(alias.asname or alias.name).split(".")[0] for alias in node.names}
        if isinstance(declared[0].value, ast.List) and all(isinstance(e, ast.Constant) for e in declared[0].value.elts):
            names = ast.literal_eval(declared[0].value)
            assert set(names) <= bound, set(names) - bound  # (the package's lazy names: TestPublicApi)


class TestStructuredErrors:
    def test_range_error_carries_its_fields(self):
        from emulate.validate import check_range

        with pytest.raises(emulate.BadValueError, match=r"mix 1.5: allowed \[0, 1\]") as caught:
            check_range("mix", 1.5, 0.0, 1.0)
        assert (caught.value.what, caught.value.value, caught.value.allowed) == ("mix", 1.5, (0.0, 1.0))

    def test_count_error_carries_its_fields(self):
        from emulate.validate import check_count

        with pytest.raises(emulate.BadValueError) as caught:
            check_count("steps", 0, 2, 64)
        assert (caught.value.what, caught.value.value, caught.value.allowed) == ("steps", 0, (2, 64))
