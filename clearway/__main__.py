"""`python -m clearway`: the same command line as the `clearway` script."""

from clearway.cli import main

if __name__ == "__main__":
    main(prog_name="clearway")
