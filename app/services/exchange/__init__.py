"""Files in and out: the study file (schema, import, export), spreadsheets, the PDF report."""
