"""What ``pip install .`` puts into site-packages: one import name, ``bandsmith``.

The mapping of folders to import names is setuptools' ``package-dir`` (setuptools documentation,
"Package Discovery and Namespace Packages", custom discovery with ``packages`` and
``package-dir``). A wheel's top-level entries are what an installer unpacks into site-packages
(PEP 427, "File contents": the package folders and ``{name}-{version}.dist-info``).
"""

from __future__ import annotations

import shutil
import subprocess
import sys
import tomllib
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PYPROJECT = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
SETUPTOOLS = PYPROJECT["tool"]["setuptools"]


def _packages_on_disk() -> set[str]:
    """Every folder with an ``__init__.py`` under a mapped folder, as its import name."""
    found = set()
    for name, folder in SETUPTOOLS["package-dir"].items():
        base = ROOT / folder
        for init in base.rglob("__init__.py"):
            rel = init.parent.relative_to(base)
            if "__pycache__" in rel.parts:
                continue
            sub = ".".join((name, *rel.parts)) if rel.parts else name
            # a sub-folder that is itself mapped (app/ under core/ would be) belongs to that mapping
            owner = max((n for n in SETUPTOOLS["package-dir"] if sub == n or sub.startswith(n + ".")), key=len)
            if owner == name:
                found.add(sub)
    return found


def test_the_packages_list_is_every_folder_with_an_init():
    listed = SETUPTOOLS["packages"]
    assert len(listed) == len(set(listed)), "a package listed twice"
    assert set(listed) == _packages_on_disk()


def test_every_package_is_under_the_one_name():
    assert all(p == "bandsmith" or p.startswith("bandsmith.") for p in SETUPTOOLS["packages"])
    assert PYPROJECT["project"]["scripts"]["bandsmith"].startswith("bandsmith.")


def test_the_wheel_holds_only_bandsmith_and_its_dist_info(tmp_path):
    # Build from a copy, so that setuptools' in-tree build folder never lands in the repository.
    src = tmp_path / "src"
    src.mkdir()
    for name in ("pyproject.toml", "README.md", "LICENSE"):
        shutil.copy2(ROOT / name, src / name)
    for folder in {*SETUPTOOLS["package-dir"].values()}:
        shutil.copytree(ROOT / folder, src / folder, ignore=shutil.ignore_patterns("__pycache__", "*.pyc"))
    out = tmp_path / "wheel"
    p = subprocess.run(
        [sys.executable, "-m", "pip", "wheel", "-q", "--no-deps", "--disable-pip-version-check", "-w", str(out), str(src)],
        capture_output=True, text=True, timeout=600,
    )
    if p.returncode != 0 and any(s in p.stderr for s in ("No matching distribution", "Could not find a version", "NewConnectionError")):
        pytest.skip("building a wheel needs setuptools and wheel from the package index, which is out of reach")
    assert p.returncode == 0, p.stderr
    (wheel,) = out.glob("bandsmith-*.whl")
    names = zipfile.ZipFile(wheel).namelist()
    version = PYPROJECT["project"]["version"]
    assert {n.split("/")[0] for n in names} == {"bandsmith", f"bandsmith-{version}.dist-info"}
    for must in ("bandsmith/__init__.py", "bandsmith/api.py", "bandsmith/app/entry.py",
                 "bandsmith/resources/demo_session.bandsmith.json", f"bandsmith-{version}.dist-info/entry_points.txt"):
        assert must in names, must
