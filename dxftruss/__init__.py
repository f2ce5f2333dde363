"""dxftruss: check truss line drawings (DXF) before analysis or fabrication."""

__version__ = "0.1.0"
