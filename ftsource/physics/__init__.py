"""Physics used by several stages: refractive index of air, field of view, encoder optical path."""
