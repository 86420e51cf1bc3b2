"""Lines in a spectrum: finding and fitting, ghosts, aliasing, sweep comparison."""
