"""SQL statements, one per file: stg_ (staging), int_ (intermediate), out_ (output)."""
