"""Interactive dashboard (ipywidgets + bqplot) over the public dampline API.

Importing this subpackage imports ipywidgets and bqplot; ``import dampline``
alone does not (``dl.Dashboard`` is resolved lazily).
"""

from .app import Dashboard

__all__ = ["Dashboard"]
