"""ftsource: characterize a light source from scanned-mirror (Michelson) interferograms."""

__version__ = "0.1.0"
