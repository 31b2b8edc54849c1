"""The configs shipped in configs/ stay valid against the contract."""

from pathlib import Path

import pytest

from scorecard.config.loading import load_config

CONFIGS = sorted((Path(__file__).parents[1] / "configs").glob("*.yaml"))


@pytest.mark.parametrize("path", CONFIGS, ids=lambda p: p.name)
def test_shipped_config_loads(path):
    config = load_config(path)
    assert config.data.target and config.data.source.is_absolute()


def test_there_is_an_example_config():
    assert any(p.name == "example.yaml" for p in CONFIGS)
