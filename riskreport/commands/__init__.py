"""The commands of the command line, one module each (``riskreport.cli`` parses the options and reports)."""
