"""``leapwright``: plan and check jumps from the command line.

Exit codes: 0 success (no findings), 1 findings (check), 2 bad input or an output
that could not be written (disk full, no permission, closed pipe, out of memory),
130 interrupted (Ctrl-C). Every failure prints one line on stderr and never a
traceback; files are written whole or not at all (:mod:`cli.output_files`).
"""

import argparse
import os
import sys

from leapwright.core.base.errors import LeapwrightError

from cli import plan as cli_plan
from cli.output_files import reason

#: Exit code of a run stopped by Ctrl-C (128 + SIGINT), as shells report it.
INTERRUPTED = 130


class _Parser(argparse.ArgumentParser):
    """argparse that exits 2 with one line (no usage dump) on bad arguments."""

    def error(self, message):
        self.exit(2, f"leapwright: {message}\n")


def _subcommands():
    modules = [cli_plan]
    try:
        from cli import check as cli_check
    except ImportError:  # the checker is optional while it is being built
        cli_check = None
    if cli_check is not None:
        modules.append(cli_check)
    from cli import follow_through, export as cli_export
    modules += [follow_through, cli_export]
    return modules


def build_parser():
    parser = _Parser(prog="leapwright", description="Physically consistent jump animation.")
    sub = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)
    for module in _subcommands():
        module.add_parser(sub)
    return parser


def main(argv=None):
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        code = int(args.func(args) or 0)
        sys.stdout.flush()  # a full device or a closed pipe shows here, not at exit
        return code
    except LeapwrightError as exc:
        return _fail(str(exc))
    except KeyboardInterrupt:
        return _fail("interrupted; files being written were left as they were", INTERRUPTED)
    except BrokenPipeError:
        return _fail("the output was closed before the command finished (broken pipe)", stdout_gone=True)
    except MemoryError:
        return _fail("out of memory; give a shorter frame range or fewer files at once")
    except OSError as exc:
        if exc.filename:
            return _fail(f"cannot write {exc.filename!r}: {reason(exc)}")
        return _fail(f"cannot write the output: {reason(exc)}", stdout_gone=True)


def _fail(message, code=2, stdout_gone=False):
    """One line on stderr; returns ``code``.

    When standard output itself failed (full device, closed pipe), what is still
    buffered for it is sent nowhere, so exiting prints no second message.
    """
    if stdout_gone:
        try:
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
            os.close(devnull)
        except (OSError, ValueError):
            pass
    try:
        print(f"leapwright: {message}", file=sys.stderr, flush=True)
    except OSError:
        pass
    return code


if __name__ == "__main__":
    sys.exit(main())
