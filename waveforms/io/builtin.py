"""Importing this module registers every built-in importer (one module each).

To add a format: write ``waveforms/io/<format>.py`` that calls
`waveforms.io.registry.register`, and add one import line here.
"""

from . import hdf5_native  # noqa: F401
from . import hdf5_mapped  # noqa: F401
from . import delimited  # noqa: F401
from . import comtrade  # noqa: F401
