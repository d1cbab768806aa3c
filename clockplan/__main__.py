"""Allow ``python -m clockplan``."""

from clockplan.entry import main_entry

main_entry()
