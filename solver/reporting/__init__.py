"""Presentation of results: the console report (:mod:`.text`) and result files in CSV, XLSX or
JSON written whole or not at all (:mod:`.files`)."""
