"""Bundled demo patterns (``*.rowcast.toml``) and hardware profiles (``profiles/*.toml``).

Package data only: built into the wheel as ``composer.patterns`` (``pyproject.toml`` maps this folder);
code reaches it through ``composer.bundled``.
"""
