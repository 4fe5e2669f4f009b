"""The memo's templates ship in a normal (non-editable) install, and are found there."""

from __future__ import annotations

import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.mark.slow
def test_wheel_carries_every_template(tmp_path):
    # As a user would build it: pip in an isolated build environment, so a few seconds or more.
    subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", str(ROOT),
                    "-w", str(tmp_path)], check=True, capture_output=True, timeout=300)
    wheel = next(tmp_path.glob("obligor_memo-*.whl"))
    names = zipfile.ZipFile(wheel).namelist()
    shipped = {Path(n).name for n in names if ".data/data/share/obligor-memo/templates/" in n}
    expected = {p.name for p in (ROOT / "templates").iterdir() if p.suffix in (".html", ".css")}
    assert expected and shipped == expected, names


def test_templates_found_beside_the_package_or_under_the_prefix(monkeypatch, tmp_path):
    from app import memo

    assert memo.find_templates() == ROOT / "templates"        # a checkout: the documented layout
    # An installed wheel: app/ in site-packages (no templates beside it), templates under prefix.
    installed = tmp_path / "share" / "obligor-memo" / "templates"
    installed.mkdir(parents=True)
    (installed / "memo.html").write_text("<html></html>")
    fake_module = tmp_path / "site-packages" / "app" / "memo.py"
    monkeypatch.setattr(memo, "__file__", str(fake_module))
    monkeypatch.setattr(sys, "prefix", str(tmp_path))
    assert memo.find_templates() == installed
