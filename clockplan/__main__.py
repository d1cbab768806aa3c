"""Allow ``python -m clockplan``."""

from clockplan.cli import main_entry

main_entry()
