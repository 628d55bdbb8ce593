"""The desktop window: the only package of ClusterDesk that imports PySide6 or pyqtgraph.

Nothing here computes statistics; every number shown comes from the
:class:`~clusterdesk.analysis.Analysis` object the window drives. Start it
with :func:`clusterdesk.gui.app.main` (or the ``clusterdesk`` command with no
argument).
"""
