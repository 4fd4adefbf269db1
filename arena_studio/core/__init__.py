"""Qt-free core: scene model, geometry, goals, tapes and metrics.

Only numpy, shapely, scipy and msgpack are used here, so a simulator on a cluster can import
this package without a display or a Qt installation.
"""
