"""``python -m scorecard`` and the ``scorecard`` command: the command line in a process of its own.

A command that succeeded has written and closed everything it writes. Tearing down the
interpreter after it (every module of pandas, scipy, pyarrow and openpyxl, a last collection of
every object) takes a good part of a second on its own, which the user waits for and which does
nothing. So once a command has succeeded, and nothing else runs in the process (no other
thread, no child process), the exit handlers run as at any exit, the output streams are flushed
and the process ends at once. A failure, or a process with anything still running, exits as
usual.
"""

import atexit
import os
import sys
import threading

from scorecard.cli import main


def run() -> None:
    """Run the command line; end the process at once after a command that succeeded."""
    try:
        main(prog_name="scorecard")
        code = 0
    except SystemExit as done:
        code = done.code
    if code in (0, None) and _alone():
        atexit._run_exitfuncs()
        try:
            sys.stdout.flush()
            sys.stderr.flush()
        except (OSError, ValueError):
            sys.exit(code)      # a closed pipe, say: reported as at any exit
        os._exit(0)
    sys.exit(code)


def _alone() -> bool:
    """Nothing but this thread runs in the process, and it has no child process."""
    if threading.active_count() > 1:
        return False
    processes = sys.modules.get("multiprocessing")
    return processes is None or not processes.active_children()


if __name__ == "__main__":
    run()
