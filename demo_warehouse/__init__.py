"""The demo warehouse: the invented book of Quillfield Credit and the demo's model specs.

``generate`` builds the book in a DuckDB file, ``fit_spec`` fits version 1 of the demo model
from its development table (``spec_v1.yaml`` is its committed output), and ``run`` is what
``scoremon demo`` calls. Every person, loan and number here is invented.
"""
