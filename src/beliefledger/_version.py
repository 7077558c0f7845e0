"""The version of beliefledger (one home: the package, the record header and the CLI read it)."""

__version__ = "0.1.0"
