"""From interferograms to a spectrum: apodization, phase correction, FFT, the Spectrum object."""
