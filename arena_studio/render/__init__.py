"""How scene and episode elements are drawn, shared by the canvas and the offscreen exporter."""
