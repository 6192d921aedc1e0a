"""Loadledger's engine: reading, cleaning, profiling, modelling and budgeting meter data.

The engine never imports Qt or the ``desktop`` package; the window and the command line are
thin layers over it.
"""

__version__ = "0.1.0"
