"""Reports for people: text tables, figures and map pages.

:mod:`~tripsim.report.text` (tables and lines), :mod:`~tripsim.report.plots`
(figures), :mod:`~tripsim.report.mapview` (map pages), :mod:`~tripsim.report.geo`
(GeoJSON).  Reports take results and return text, figures or HTML; writing them to
files is :mod:`tripsim.io.export`'s job.
"""
