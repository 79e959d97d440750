"""Plain data shared by several layers: the run record, lot and verdict records, limits.

Import the modules themselves (``freezeout.records.run`` ...); this face stays empty so that
importing a light record does not import numpy.
"""
