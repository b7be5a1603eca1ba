"""footgen: printed inverted-F antenna footprints for KiCad from a JSON design spec."""

__version__ = "0.1.0"
