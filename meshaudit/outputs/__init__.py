"""Report renderers, one module per output format. The core never prints."""
