"""Shared fixtures: the invented demo sample, built once per test session."""

from __future__ import annotations

import pytest

from scorecard.api import open_engine
from scorecard.build.pipeline import build_scorecard
from scorecard.config.loading import load_config
from scorecard.demo.files import write_demo


@pytest.fixture(scope="session")
def demo_config_path(tmp_path_factory):
    """A demo folder (20,000 invented applications, config, drifted sample)."""
    return write_demo(tmp_path_factory.mktemp("demo"), rows=20_000, seed=2024)


@pytest.fixture(scope="session")
def demo_build(demo_config_path):
    """The demo scorecard built in memory (no files written)."""
    config = load_config(demo_config_path)
    return build_scorecard(config, open_engine(config))


@pytest.fixture(scope="session")
def demo_dir(demo_config_path):
    """The demo folder: its data files beside the config."""
    return demo_config_path.parent


@pytest.fixture(scope="session")
def model_path(demo_build, tmp_path_factory):
    """The demo scorecard written as a model file."""
    path = tmp_path_factory.mktemp("model") / "scorecard.json"
    path.write_text(demo_build.card.to_json(), encoding="utf-8")
    return path
