"""`python -m auditor` runs the command line."""
from auditor.cli import entry

entry()
