"""The tool's version, printed in every sheet's footer and in the results."""

__version__ = "0.1.0"
