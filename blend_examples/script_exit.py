"""How the demo's Blender scripts end: one line on failure, clean-up, then ``os._exit``.

A Blender process that leaves with add-on classes still registered can crash or
hang on the way out, so every script disables the extension and leaves through
``os._exit`` with its own status, whatever happened before.
"""

import os
import sys
import traceback


def run_and_exit(label, body, cleanup=None):
    """Run ``body()``, report a failure in one line (or a traceback), clean up, exit.

    Parameters
    ----------
    label : str
        The script's name in the failure line (``"<label> failed: ..."``).
    body : callable
        The script's work; ``SystemExit`` carries a message for the user.
    cleanup : callable, optional
        Runs last, even after a failure (disable the extension, remove temporary folders).
    """
    status = 1
    try:
        body()
        status = 0
    except SystemExit as exc:
        print(f"{label} failed: {exc}", file=sys.stderr)
    except Exception:  # noqa: BLE001 - any failure must still reach os._exit
        traceback.print_exc()
    finally:
        try:
            if cleanup is not None:
                cleanup()
        finally:
            sys.stdout.flush()
            sys.stderr.flush()
            os._exit(status)
