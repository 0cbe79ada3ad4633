"""The ``firstrung`` command line: a thin layer that reads options, calls one
library function and renders its result. Heavy libraries load only inside
the commands, so ``firstrung --help`` starts fast."""

from __future__ import annotations

import sys


def main(argv: list[str] | None = None) -> None:
    """Entry point of the console script."""
    from .app import build

    app = build()
    args = sys.argv[1:] if argv is None else argv
    debug = "--debug" in args
    try:
        app(args=args, prog_name="firstrung", standalone_mode=True)
    except SystemExit:
        raise
    except KeyboardInterrupt:
        print("firstrung: interrupted", file=sys.stderr)
        raise SystemExit(130) from None
    except Exception as error:  # an internal error: short message, traceback only on request
        if debug:
            raise
        print(
            f"firstrung: internal error ({type(error).__name__}: {error}); "
            "run again with --debug for the details",
            file=sys.stderr,
        )
        raise SystemExit(3) from None
