"""Rendering, measuring and reporting what a visitor sees through a cloak exhibit.

Sub-packages, in the order data flows down (a package imports only those below it):
``cli`` (the command line), ``api`` (the public functions), ``proposal`` (summary,
charts, drawing, page), ``planning`` (inventory, design search, tolerances), ``sweeps``
(the job map and what runs on it), ``frame`` (one rendered frame) and ``scene`` (the
scene file). ``color``, ``files``, ``progress`` and ``cautions`` serve them all.
"""
