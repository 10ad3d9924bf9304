"""Front ends over the one pipeline: the command line, the file runner and the shell."""
