"""Packaging: every sub-package of tripsim is installed, and the service is installed
under its own name (tripsim_api, from api/)."""

from __future__ import annotations

import tomllib

from tests.api.conftest import ROOT


def test_every_package_is_listed_for_installing():
    config = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]
    listed = set(config["packages"])
    found = {".".join(p.parent.relative_to(ROOT).parts)
             for p in (ROOT / "tripsim").rglob("__init__.py")}
    assert found <= listed, f"add to [tool.setuptools] packages: {sorted(found - listed)}"
    assert "tripsim_api" in listed and config["package-dir"]["tripsim_api"] == "api"


def test_the_service_imports_by_its_own_name():
    import tripsim_api
    from tripsim_api.app import create_app

    assert tripsim_api.__file__.endswith("api/__init__.py") and callable(create_app)
