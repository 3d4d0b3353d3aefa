"""``python -m nmrcheck``: the command line."""

from nmrcheck.cli import main

if __name__ == "__main__":
    main()
