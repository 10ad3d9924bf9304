"""Tables the session knows: loading files and describing them."""
