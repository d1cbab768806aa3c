"""One module per subcommand; each defines ``register(subparsers)``.

``register`` adds the subparser and sets ``func`` to a callable taking the parsed
arguments and returning the exit status. Modules are found by name, in
alphabetical order, so adding a command means adding one file here.
"""

from __future__ import annotations

import pkgutil
from importlib import import_module
from types import ModuleType

COMMAND_MODULES: tuple[ModuleType, ...] = tuple(
    import_module(f"{__name__}.{info.name}")
    for info in sorted(pkgutil.iter_modules(__path__), key=lambda info: info.name)
    if not info.name.startswith("_")
)
