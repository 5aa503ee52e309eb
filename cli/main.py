"""``leapwright``: plan and check jumps from the command line.

Exit codes: 0 success (no findings), 1 findings (check), 2 bad input. Bad input
prints one line on stderr and never a traceback.
"""

import argparse
import sys

from leapwright.core.base.errors import LeapwrightError

from cli import plan as cli_plan


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
        return int(args.func(args) or 0)
    except LeapwrightError as exc:
        print(f"leapwright: {exc}", file=sys.stderr)
        return 2
    except BrokenPipeError:
        return 0


if __name__ == "__main__":
    sys.exit(main())
