"""Serving the explorer as a local web page (``diskexplorer demo``).

``server`` supervises voila (plain processes and sockets, no widgets); ``notebook_entry``
is what the served notebook (``explorer.ipynb``) runs in each page's kernel.
"""
