"""The versioned Parquet archive: one Hive-style partition folder per table, one file per version.

``layout`` names the paths, ``lock`` keeps one writer per archive, ``writer`` commits versions,
``drift`` compares a harvest with the previous version, ``archive`` reads versions back. The
contract all of them follow (layout, commit protocol, file contents) is written down in
``layout``'s docstring and in the project's store notes.
"""
