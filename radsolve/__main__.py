"""``python -m radsolve``: the same command line as the ``radsolve`` script."""

from radsolve.cli import main

if __name__ == "__main__":
    main()
