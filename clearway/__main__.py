"""`python -m clearway`: the same command line as the `clearway` script."""

from clearway.cli import script

if __name__ == "__main__":
    script()
