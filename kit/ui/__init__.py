"""Widget cells (ipywidgets + ipympl) over the kit's functions.

The ui layer imports kit; kit never imports the ui. Each builder returns an object with
named handles and takes ``display=False`` to build without showing (for tests).
"""
