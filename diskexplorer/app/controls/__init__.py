"""Widgets that write to the explorer's state: parameter controls, model panels, ring cards.

Each control is generated from a parameter's declaration
(:func:`~diskexplorer.physics.parameters.parameter`) and calls one
:class:`~diskexplorer.app.state.ExplorerState` editing method; none holds model values.
"""
