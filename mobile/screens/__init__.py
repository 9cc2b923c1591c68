"""The tablet screens: one module per screen beside its .kv file, shared widgets in widgets.py."""
