"""Reading design files into the connectivity model. The only package that opens files."""
