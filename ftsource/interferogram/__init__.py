"""From a record to interferograms: optical path from the reference, uniform-OPD resampling, ZPD."""
