"""The demo: an invented sample and its config, written to a folder and ready to build."""

from __future__ import annotations

from pathlib import Path

from scorecard.demo.applications import demo_config_text, make_applications, make_declined
from scorecard.outputs.atomic import atomic_path, write_text

DATA_FILE = "applications.csv"
DRIFTED_FILE = "applications_recent_drifted.csv"
DECLINED_FILE = "declined.csv"
CONFIG_FILE = "scorecard.yaml"


def write_demo(directory, rows: int = 20_000, seed: int = 2024) -> Path:
    """Write the demo sample, a drifted recent sample, the declined applications and the config.

    Returns the config path.

    Examples
    --------
    >>> import tempfile
    >>> path = write_demo(tempfile.mkdtemp(), rows=1000)
    >>> path.name
    'scorecard.yaml'
    """
    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    for name, drift, offset in ((DATA_FILE, False, 0), (DRIFTED_FILE, True, 1)):
        frame = make_applications(rows=rows, seed=seed + offset, drift=drift)
        with atomic_path(directory / name) as tmp:
            frame.to_csv(tmp, index=False)
    with atomic_path(directory / DECLINED_FILE) as tmp:
        make_declined(rows=rows, seed=seed).to_csv(tmp, index=False)
    config = directory / CONFIG_FILE
    write_text(config, demo_config_text(DATA_FILE))
    return config
