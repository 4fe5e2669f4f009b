"""The distribution: one namespace at the top of site-packages, templates and sample inside it.

The wheel is built from the checkout and installed into a fresh virtual environment (no network:
the dependencies are not installed there, only the package's own files are inspected), then
imported from outside the checkout so nothing can come from the working tree.
"""

from __future__ import annotations

import subprocess
import sys
import venv
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def wheel(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("wheel")
    subprocess.run(
        [sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w", str(out), str(ROOT)],
        check=True,
        capture_output=True,
        timeout=300,
    )
    return next(out.glob("obligor_memo-*.whl"))


def _top_level(names: list[str]) -> set[str]:
    return {n.split("/")[0] for n in names if not n.split("/")[0].endswith((".dist-info", ".data"))}


@pytest.mark.slow
def test_wheel_holds_one_top_level_package_with_its_data(wheel):
    names = zipfile.ZipFile(wheel).namelist()
    assert _top_level(names) == {"obligor_memo"}, _top_level(names)
    shipped = {Path(n).name for n in names if n.startswith("obligor_memo/templates/")}
    expected = {p.name for p in (ROOT / "templates").iterdir() if p.suffix in (".html", ".css")}
    assert expected and expected <= shipped
    assert "obligor_memo/py.typed" in names
    assert "obligor_memo/sample_data/hollowmere.yaml" in names
    assert "obligor_memo/app/assets/plotly/plotly-cartesian.min.js" in names


@pytest.mark.slow
def test_wheel_installed_in_a_fresh_environment_lists_only_its_namespace(wheel, tmp_path):
    env = tmp_path / "env"
    venv.EnvBuilder(with_pip=True, system_site_packages=False).create(env)
    python = env / "bin" / "python"
    subprocess.run(
        [str(python), "-m", "pip", "install", "--no-deps", "--no-index", "-q", str(wheel)],
        check=True,
        capture_output=True,
        timeout=300,
    )
    site = subprocess.run(
        [str(python), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
        check=True,
        capture_output=True,
        text=True,
    ).stdout.strip()
    entries = {p.name for p in Path(site).iterdir()}
    ours = {
        e
        for e in entries
        if not e.startswith(
            ("pip", "_distutils_hack", "distutils-precedence", "setuptools", "pkg_resources", "__pycache__")
        )
        and not e.endswith((".dist-info", ".pth"))
    }
    assert ours == {"obligor_memo"}, ours
    assert not (Path(site) / "app").exists() and not (Path(site) / "engine").exists()
    # The installed copy finds its templates and sample inside the package (no checkout on the path).
    probe = (
        "from importlib import resources; from pathlib import Path; "
        "t = Path(str(resources.files('obligor_memo.templates'))); "
        "s = Path(str(resources.files('obligor_memo.sample_data'))); "
        f"print((t / 'memo.html').is_file(), (s / 'hollowmere.yaml').is_file(), t.is_relative_to(Path(r'{site}')))"
    )
    done = subprocess.run([str(python), "-c", probe], check=True, capture_output=True, text=True, cwd=tmp_path)
    assert done.stdout.split() == ["True", "True", "True"]


def test_templates_found_in_the_checkout():
    from obligor_memo.app.memo import templates

    assert templates.find_templates() == ROOT / "templates"
