"""Figure builders: pandas frames in, plotly figures out. Every colour comes from
``palette``; fonts, axes and margins from ``style``."""
