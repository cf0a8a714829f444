"""The ``roundsman`` console script: the window with no arguments, else the CLI.

Qt is imported only when the window is opened, so headless commands run on
machines without a display or Qt's system libraries.
"""

from __future__ import annotations

import sys
from collections.abc import Sequence


def main(argv: Sequence[str] | None = None) -> int:
    args = list(sys.argv[1:] if argv is None else argv)
    if not args:
        from app.main import run_window

        return run_window()
    if args[0] == "card":  # drawing needs Qt, so the card command lives in app
        from app.card.cli import main as card_main

        return card_main(args[1:])
    from core.cli import main as cli_main

    return cli_main(args)


if __name__ == "__main__":
    sys.exit(main())
