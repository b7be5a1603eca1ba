"""Plugin-manager packaging inputs: the metadata template and the icon drawn by code.

Not part of the archive's ``plugins/`` folder; ``scripts/build_plugin.py`` reads these.
"""
