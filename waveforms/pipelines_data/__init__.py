"""Recipe files shipped with the package (``motor-waveforms recipes`` lists them).

The same files are kept at the top of the repository in ``pipelines/``.
"""
