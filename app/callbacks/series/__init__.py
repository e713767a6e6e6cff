"""Many series: every series of the file, replicate groups, the chunked batch run, the overview grid
and plate map, and opening a clicked series in the panels; one module each, each with register(app).

Nothing is kept on the server between requests: the series, groups, job and fits live in the tab.
"""
