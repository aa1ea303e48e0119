"""Many boards at once: each board scanned as one task on a Dask cluster, a summary of them all.

``boards`` expands the command line into boards and report folder names, ``fingerprint`` hashes
a board's inputs, ``task`` is what a worker runs for one board, ``engine`` submits the tasks and
collects the rows, ``summary`` and ``index_page`` write batch.json, batch.csv and index.html.
"""
