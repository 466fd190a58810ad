"""Charts of a study result, drawn with pyqtgraph.

- ``desktop.charts.common``      chart frame, log-penalty axis, PNG/SVG export
- ``desktop.charts.path_chart``  coefficient paths with a draggable cursor, hover names, highlight
- ``desktop.charts.curve_chart`` validation error with error bars and the two choice marks
- ``desktop.charts.share_chart`` stability shares as horizontal bars
- ``desktop.charts.focal_chart`` the focal effect and its interval
"""

__all__: list[str] = []
