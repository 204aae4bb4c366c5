"""Shared fixtures: paths of bundled flowsheets and a helper to write bad ones."""

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "flowsheets" / "demo.toml"


@pytest.fixture
def demo_path() -> Path:
    return DEMO


@pytest.fixture
def demo_text() -> str:
    return DEMO.read_text(encoding="utf-8")
