"""The receiver firmware's C sources, Makefile and simavr harness.

Package data only: built into the wheel as ``transport.firmware_stub`` (``pyproject.toml`` maps this folder);
``transport.simboard`` finds it through ``composer.bundled.data_path`` and builds outside it.
"""
