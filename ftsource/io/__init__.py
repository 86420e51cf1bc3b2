"""Reading records (CSV/TSV, .npz, .wav) into a :class:`~ftsource.io.records.Record`."""
