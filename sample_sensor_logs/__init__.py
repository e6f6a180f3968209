"""The bundled demo scenario (an invented farm), shipped inside the package for `frostwatch demo`."""
