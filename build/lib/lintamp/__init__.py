"""lintamp: topology and impedance checks for analog SPICE netlists."""

import os as _os

__version__ = "0.1.0"

# The built-in rules live in the repository's top-level rules/ folder and are
# installed as ``lintamp.rules``.  Running from a source tree (tests, a checkout
# on PYTHONPATH) finds them there too.
_here = _os.path.dirname(__file__)
if not _os.path.isdir(_os.path.join(_here, "rules")):
    _tree = _os.path.dirname(_here)
    if _os.path.isfile(_os.path.join(_tree, "rules", "__init__.py")):
        __path__.append(_tree)  # noqa: F821 - the package's own __path__
