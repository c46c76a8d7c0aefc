"""The explorer application (ipywidgets + bqplot): the only package that imports them.

``explore()`` opens the application on the sample data; see :class:`Explorer`.
"""
from .explorer import Explorer, Frame, explore

__all__ = ["explore", "Explorer", "Frame"]
