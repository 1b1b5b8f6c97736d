"""Report writers, one module per output format."""
from diagap.report.csv import write_response_csv
from diagap.report.spice import write_spice

__all__ = ["write_response_csv", "write_spice"]
