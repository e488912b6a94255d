"""What goes into a proposal: the design summary, charts, the layout drawing, the HTML page."""
