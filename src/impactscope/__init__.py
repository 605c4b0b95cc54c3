"""impactscope: size the downstream impact of planned changes to a Python library's public API."""

__version__ = "0.2.0"
