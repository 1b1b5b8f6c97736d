"""Report writers, one module per output format."""
from .csv import write_response_csv
from .spice import write_spice

__all__ = ["write_response_csv", "write_spice"]
