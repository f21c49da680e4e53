"""Tests for the package's top-level public API (emulate/__init__.py)."""

import subprocess
import sys

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
