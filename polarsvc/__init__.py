"""polarsvc: a curated store of airfoil section polars that serves full-range, rotationally
augmented and interpolated tables to rotor solvers, each with a content hash and a lineage.

Layers (data flows one way):
    polarsvc.aero   pure numerics on numpy arrays (no I/O)
    polarsvc.formats  parsing and writing of table files (bytes <-> Polar)
    polarsvc.store  SQLAlchemy models, hashing, storage functions
    polarsvc.api    FastAPI application
    polarsvc.web    server-rendered pages and plots
    polarsvc.client httpx client for scripts
    polarsvc.cli    command line
"""

__version__ = "0.2.1"
