"""limbchart: graded leg-artery maps from arterial duplex findings."""

__version__ = "0.1.0"
