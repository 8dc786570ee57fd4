"""The version of sedreport, in one place (read by the package, the CLI and the records)."""

__version__ = "0.1.0"
