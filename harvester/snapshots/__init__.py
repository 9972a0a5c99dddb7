"""The snapshot archive: every exchange kept as WARC 1.1 (ISO 28500:2017), read back by anyone.

``warc`` writes the files (request and response records, revisits, a warcinfo per file). The
index, the reader, cassettes and reparse come next (issue 9).
"""
