"""The rule catalog: one module per rule, found at run time by `auditor.catalog`.

Installed as the subpackage `auditor.rules`; nothing here registers rules by hand.
"""
