"""plantdb: the record of a fiber-optic operator's cable plant, and the answers drawn from it."""

__version__ = "0.1.0"
