"""The ``firstrung`` command line: a thin layer that reads options, calls one
library function and renders its result. Heavy libraries load only inside
the commands, so ``firstrung --help`` starts fast.

Exit status: 0 success, 1 checks found problems (``check``), 2 bad usage or
unreadable input (one line on stderr per problem, never a traceback), 3 an
internal error (a short line saying to run again with ``--debug``, which
prints the traceback), 130 interrupted (Ctrl-C; no output is left half
written, see :func:`firstrung.output.write_atomic`).
"""

from __future__ import annotations

import sys

#: Exit status of an internal error (a fault in firstrung, not in the inputs).
INTERNAL_ERROR_STATUS = 3
#: Exit status after Ctrl-C (128 + SIGINT, the shells' convention).
INTERRUPTED_STATUS = 130
#: Longest error text quoted in the one-line internal error message.
_SUMMARY_LIMIT = 200


def _take_debug(args: list[str]) -> tuple[list[str], bool]:
    """The arguments without ``--debug`` (accepted anywhere before ``--``), and whether it was given."""
    end = args.index("--") if "--" in args else len(args)
    kept = [a for a in args[:end] if a != "--debug"] + args[end:]
    return kept, len(kept) != len(args)


def _interrupted(error: BaseException) -> bool:
    """Whether an exit was caused by Ctrl-C somewhere down its chain of causes."""
    seen = set()
    while error is not None and id(error) not in seen:
        if isinstance(error, KeyboardInterrupt):
            return True
        seen.add(id(error))
        error = error.__cause__ or error.__context__
    return False


def _summary(error: BaseException) -> str:
    """``Type: first line of the message``, cut to a readable length."""
    text = str(error).strip().splitlines()[0] if str(error).strip() else ""
    if len(text) > _SUMMARY_LIMIT:
        text = text[:_SUMMARY_LIMIT] + "..."
    from firstrung.cli.common import terminal_text

    return terminal_text(f"{type(error).__name__}: {text}" if text else type(error).__name__, one_line=True)


def _one_line_warning(message, category, filename, lineno, file=None, line=None) -> None:
    """Show a warning from inside firstrung as one line, without the source line."""
    print(
        f"firstrung: warning: {category.__name__}: {str(message).splitlines()[0] if str(message) else ''} "
        "(run again with --debug to see where)",
        file=sys.stderr,
    )


def main(argv: list[str] | None = None) -> None:
    """Entry point of the console script.

    Parameters
    ----------
    argv : list of str, optional
        The arguments (default: ``sys.argv[1:]``). ``--debug`` may stand
        anywhere before ``--``: an internal error then prints its traceback.

    Raises
    ------
    SystemExit
        With the exit status.
    """
    from firstrung.cli import kept_methods

    kept_methods.install()  # before any dataclass is made: typer's and rich's too
    try:
        _run(argv)
    finally:
        kept_methods.keep()


def _run(argv: list[str] | None) -> None:
    """:func:`main` once the dataclass methods' kept code is in place."""
    import warnings

    from firstrung.cli.direct import run_direct

    args, debug = _take_debug(list(sys.argv[1:] if argv is None else argv))
    with warnings.catch_warnings():
        if not debug:
            warnings.showwarning = _one_line_warning
        try:
            if not run_direct(args):  # a plain command line is read without typer; typer reads the rest
                from firstrung.cli.app import build, plain_values

                plain_values()
                build(args)(args=args, prog_name="firstrung", standalone_mode=True)
        except SystemExit as exit_:
            if exit_.code == INTERRUPTED_STATUS and _interrupted(exit_):
                print("firstrung: interrupted", file=sys.stderr)
            raise
        except KeyboardInterrupt:
            print("firstrung: interrupted", file=sys.stderr)
            raise SystemExit(INTERRUPTED_STATUS) from None
        except Exception as error:  # an internal error: short message, traceback on request
            if debug:
                import traceback

                traceback.print_exception(error, file=sys.stderr)
                print(
                    f"firstrung: internal error ({_summary(error)}); the traceback above "
                    "shows where it happened",
                    file=sys.stderr,
                )
            else:
                print(
                    f"firstrung: internal error ({_summary(error)}); this is a fault in "
                    "firstrung, not in your files: run the same command again with --debug "
                    "for the traceback",
                    file=sys.stderr,
                )
            raise SystemExit(INTERNAL_ERROR_STATUS) from None
