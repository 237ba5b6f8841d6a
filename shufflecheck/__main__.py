"""Allow ``python -m shufflecheck``."""

from shufflecheck.cli import main

if __name__ == "__main__":
    main()
