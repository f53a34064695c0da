"""The demo warehouse: the invented book of Quillfield Credit and the demo's model specs.

``generate`` builds the book in a DuckDB file; ``develop`` develops version 1 of the demo
model on its development table with scoremon's own ``bin`` and ``fit`` (``bins_v1.yaml`` is
the modeller's reviewed binning file, ``spec_v1.yaml`` the fit's committed output);
``spec_v2.yaml`` is version 1 revised by hand (its header says how); and ``run`` is what
``scoremon demo`` calls. Every person, loan and number here is invented.
"""
