"""The built-in importers, registered by name: a format's module is imported only when it is needed.

To add a format: write ``waveforms/io/<format>.py`` with a sniffer and a
reader, and add one `register` entry here naming them
(``"waveforms.io.<format>:read_<format>"``), with the cheap pre-checks that
need no import (``magic`` leading bytes, or ``extensions_only``).  Reading a
CSV then never imports h5py, and reading an HDF5 file never imports the CSV
parser (``tests/test_io_lazy.py``).
"""

from .registry import HDF5_MAGIC, Importer, register

_M = "waveforms.io."

register(Importer(
    name="hdf5-native", description="this project's own HDF5 layout (see waveforms/io/hdf5_native.py)",
    extensions=(".h5", ".hdf5"), sniff=_M + "hdf5_native:sniff_native", read=_M + "hdf5_native:read_native",
    priority=100, magic=HDF5_MAGIC,
))
register(Importer(
    name="hdf5-mapped", description="any other HDF5 file; a mapping file names the datasets, rate and start attributes",
    extensions=(".h5", ".hdf5", ".hdf"), sniff=_M + "hdf5_mapped:sniff_hdf5_generic", read=_M + "hdf5_mapped:read_hdf5_mapped",
    priority=50, magic=HDF5_MAGIC,
))
register(Importer(
    name="csv", description="delimited text (, ; tab; decimal point or comma) with a header row",
    extensions=(".csv", ".txt", ".tsv", ".dat"), sniff=_M + "delimited:sniff_csv", read=_M + "delimited:read_csv",
    priority=10,
))
register(Importer(
    name="comtrade",
    description="COMTRADE (IEEE C37.111-1999/-2013, IEC 60255-24): .cfg + .dat (ASCII, BINARY, BINARY32, FLOAT32) or .cff",
    extensions=(".cfg", ".cff", ".dat"), sniff=_M + "comtrade:sniff_comtrade", read=_M + "comtrade:read_comtrade",
    priority=50, extensions_only=True,
))
register(Importer(
    name="parquet", description="Parquet: a time column (or none and --rate) and one column per channel, read by row group",
    extensions=(".parquet", ".pq"), sniff=_M + "parquet:sniff_parquet", read=_M + "parquet:read_parquet",
    priority=50, magic=((0, b"PAR1"),),
))
register(Importer(
    name="hdf5-matrix",
    description="HDF5 (and MATLAB v7.3 .mat) with one 2-D dataset of channels; names from an attribute or a string dataset",
    extensions=(".h5", ".hdf5", ".hdf", ".mat"), sniff=_M + "hdf5_matrix:sniff_hdf5_matrix", read=_M + "hdf5_matrix:read_hdf5_matrix",
    priority=60, magic=HDF5_MAGIC,
))
register(Importer(
    name="trend",
    description="RMS trend log (CSV or Parquet): a time column and per-phase RMS columns; analysed by the trend recipe, "
                "not read as a waveform capture (docs/trends.md)",
    extensions=(".csv", ".txt", ".tsv", ".parquet", ".pq"), sniff=_M + "trend:sniff_trend", read=_M + "trend:refuse_as_capture",
    # lowest: the CSV and Parquet importers keep their files (and their own errors); a trend log reaching them is
    # refused there with a pointer to the trend analysis, which `analyze` / `batch` pick by `io.trend.is_trend_log`
    priority=0, extensions_only=True,
))
