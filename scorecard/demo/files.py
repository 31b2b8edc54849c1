"""The demo: an invented sample and its config, written to a folder and ready to build."""

from __future__ import annotations

from pathlib import Path

from scorecard.demo.applications import add_previous_score, demo_config_text, make_applications
from scorecard.outputs.atomic import atomic_path, write_text

DATA_FILE = "applications.csv"
DRIFTED_FILE = "applications_recent_drifted.csv"
CONFIG_FILE = "scorecard.yaml"


def write_demo(directory, rows: int = 20_000, seed: int = 2024) -> Path:
    """Write the demo sample, a drifted recent sample (with the older score) and the config.

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
        if drift:
            # The recent applications also carry the score in use today, for swap sets.
            frame = add_previous_score(frame, seed)
        with atomic_path(directory / name) as tmp:
            frame.to_csv(tmp, index=False)
    config = directory / CONFIG_FILE
    write_text(config, demo_config_text(DATA_FILE))
    return config
