"""Text in and out, with no Flask and no database: build lists, stock files, drawings, reports."""
