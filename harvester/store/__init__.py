"""The versioned Parquet archive: one Hive-style partition folder per table, one file per version.

``contract`` fixes what any reader may rely on (names, files, footer keys, provenance columns);
``layout`` names the paths, ``lock`` keeps one writer per archive, ``writer`` commits versions,
``drift`` checks a harvest against the previous version, ``archive`` reads versions back,
``row_diff`` and ``partition_diff`` say what changed between two versions.
"""
