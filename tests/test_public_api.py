"""Every name listed in a package's public API resolves."""

from __future__ import annotations

import importlib

import pytest


@pytest.mark.parametrize("package", ["confirm", "predictors"])
def test_public_names_resolve(package):
    module = importlib.import_module(package)
    for name in module.__all__:
        assert getattr(module, name) is not None, name


@pytest.mark.parametrize("package", ["confirm", "predictors"])
def test_unknown_name_raises_attribute_error(package):
    module = importlib.import_module(package)
    with pytest.raises(AttributeError):
        module.no_such_name  # noqa: B018
