"""The demo: an invented sample and its config, written to a folder and ready to build."""

from __future__ import annotations

from pathlib import Path

from scorecard.demo.applications import (add_previous_score, demo_config_text,
                                         make_applications, make_declined, recent_applications,
                                         segmented_config_text)
from scorecard.outputs.atomic import Output, check_outputs, staged

DATA_FILE = "applications.csv"
DRIFTED_FILE = "applications_recent_drifted.csv"
RECENT_FILE = "applications_recent_by_month.csv"
DECLINED_FILE = "declined.csv"
CONFIG_FILE = "scorecard.yaml"
SEGMENTED_CONFIG_FILE = "scorecard_segmented.yaml"   # one card per customer segment
OUTPUTS = ("out/scorecard.xlsx", "out/scorecard.json")   # output.workbook and output.model


def write_demo(directory, rows: int = 20_000, seed: int = 2024) -> Path:
    """Write the demo sample, a drifted recent sample (with the older score), recent
    applications by month, the declined applications, the config and the config of a card per
    customer segment (built on request: ``scorecard build scorecard_segmented.yaml``).

    Returns the config path.

    Examples
    --------
    >>> import tempfile
    >>> path = write_demo(tempfile.mkdtemp(), rows=1000)
    >>> path.name
    'scorecard.yaml'
    """
    directory = Path(directory)
    # The build's outputs are checked here too, so that a demo that cannot finish writes nothing.
    names = (DATA_FILE, DRIFTED_FILE, RECENT_FILE, DECLINED_FILE, CONFIG_FILE,
             SEGMENTED_CONFIG_FILE, OUTPUTS[0], OUTPUTS[1])
    check_outputs([Output("--dir", directory / name) for name in names], {})
    with staged([Output("--dir", directory / name) for name in names[:6]]) as out:
        for name, drift, offset in ((DATA_FILE, False, 0), (DRIFTED_FILE, True, 1)):
            frame = make_applications(rows=rows, seed=seed + offset, drift=drift)
            if drift:
                # The recent applications also carry the score in use today, for swap sets.
                frame = add_previous_score(frame, seed)
            out.write(directory / name, lambda tmp, frame=frame: frame.to_csv(tmp, index=False))
        recent = recent_applications(rows_per_month=max(100, rows // 10), seed=seed)
        out.write(directory / RECENT_FILE, lambda tmp: recent.to_csv(tmp, index=False))
        declined = make_declined(rows=rows, seed=seed)
        out.write(directory / DECLINED_FILE, lambda tmp: declined.to_csv(tmp, index=False))
        out.write_text(directory / CONFIG_FILE, demo_config_text(DATA_FILE))
        out.write_text(directory / SEGMENTED_CONFIG_FILE, segmented_config_text(DATA_FILE))
    return directory / CONFIG_FILE
