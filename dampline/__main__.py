"""``python -m dampline``: the batch commands of :mod:`dampline.cli`."""

from .cli import main

if __name__ == "__main__":
    raise SystemExit(main())
