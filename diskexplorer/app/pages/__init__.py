"""The explorer's pages other than the model controls and the figures, one thin module each.

A page lays out widgets and hands every change to an
:class:`~diskexplorer.app.state.ExplorerState` method; the logic it uses lives in the
headless room (:mod:`diskexplorer.app.state`) or in the core.
"""
