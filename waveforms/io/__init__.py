"""Importers (one module per format) and the native HDF5 writer."""

from .registry import Importer, ReadOptions, importer_names, importers, read_capture, register

__all__ = ["Importer", "ReadOptions", "importer_names", "importers", "read_capture", "register"]
