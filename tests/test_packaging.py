"""The package installs what it needs: every subpackage and the bundled demo circuits."""

import pathlib
import tomllib

ROOT = pathlib.Path(__file__).resolve().parents[1]


def test_every_subpackage_is_listed_for_non_editable_installs():
    config = tomllib.loads((ROOT / "pyproject.toml").read_text())
    listed = set(config["tool"]["setuptools"]["packages"])
    found = {".".join(p.parent.relative_to(ROOT).parts) for p in (ROOT / "nodeterm").rglob("__init__.py")}
    missing = found - listed
    assert not missing, f"add these packages to [tool.setuptools] packages in pyproject.toml: {sorted(missing)}"


def test_demo_circuits_are_package_data():
    from nodeterm.demos import demo_path
    demo = pathlib.Path(demo_path())
    assert demo.is_file()
    names = {p.name for p in demo.parent.glob("*.toml")}
    assert len(names) >= 5
