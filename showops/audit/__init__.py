"""The audit, pure: the risk matrix (``risk``), incident records and their validation
(``records``), deviations found in the show log (``deviations``) and the figures of
the show report and the season audit (``season``). No database, no web, no PDF here.
"""
