"""Stand-ins for the objects the library reads from, that tell a test how they were used."""

from __future__ import annotations

import numpy as np


class MeteredArray:
    """An array-like (as an HDF5 dataset is) that keeps the size in bytes of every read in ``reads``."""

    def __init__(self, values):
        self.values, self.shape, self.dtype, self.reads = values, values.shape, values.dtype, []

    def __getitem__(self, key):
        part = np.asarray(self.values[key])
        self.reads.append(part.nbytes)
        return part
