"""footgen's KiCad side: the PCB-editor action plugin and the pcbnew board helpers.

Everything here imports only the standard library, ``pcbnew``, ``wx`` and its own modules:
this folder is copied alone into the KiCad plugin archive.  Imported as ``footgen.plugin``
(footgen's own package, e.g. by ``python3 -m footgen.plugin.board``) it does nothing; loaded by
KiCad from its plugin folder (any other package name) it registers the action plugin.
Registration needs ``pcbnew`` only; ``wx`` is imported when the action runs.
"""

from __future__ import annotations

import sys
from pathlib import Path

#: The name of this package inside footgen; KiCad imports it under its folder name instead.
FOOTGEN_PACKAGE = "footgen.plugin"
#: Why registration was skipped (None when it worked or was not attempted).
registration_error: str | None = None
#: The registered action plugin instance (None until :func:`register` succeeds).
registered = None


def register() -> bool:
    """Register the action plugin with KiCad.  False (and ``registration_error`` set) if
    ``pcbnew`` is missing; other errors propagate so KiCad lists them as a plugin load error."""
    global registration_error, registered
    if not Path(__file__).with_name("action.py").exists():
        registration_error = "no SWIG action in this folder (the IPC-API plugin's copy of the shared code)"
        return False
    try:
        import pcbnew  # noqa: F401  (KiCad's module: present whenever KiCad loads plugins)
    except ImportError as exc:
        registration_error = f"pcbnew not importable: {exc}"
        print(f"footgen plugin: not registered ({registration_error})", file=sys.stderr)
        return False
    from .action import FootgenAction

    plugin = FootgenAction()
    plugin.register()
    registered = plugin
    return True


if __name__ != FOOTGEN_PACKAGE:
    register()
