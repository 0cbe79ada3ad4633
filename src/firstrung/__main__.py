"""``python -m firstrung``: the same as the ``firstrung`` command."""

from firstrung.cli import main

if __name__ == "__main__":
    main()
