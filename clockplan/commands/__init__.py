"""One module per subcommand; each defines ``register(subparsers)`` (``_searching`` holds
what the searching commands share).

``register`` adds the subparser and sets ``func`` to a callable taking the parsed
arguments and returning the exit status. Modules are found by name, in alphabetical
order, so adding a command means adding one file here. They are imported only when
needed: the command line imports just the one it runs (OR-Tools alone takes most of a
second to import, and ``tick`` or ``pierce`` do not need it).
"""

from __future__ import annotations

import pkgutil
from importlib import import_module
from types import ModuleType

COMMAND_NAMES: tuple[str, ...] = tuple(
    sorted(info.name for info in pkgutil.iter_modules(__path__) if not info.name.startswith("_"))
)


def command_module(name: str) -> ModuleType:
    """The module of the subcommand ``name``."""
    return import_module(f"{__name__}.{name}")
