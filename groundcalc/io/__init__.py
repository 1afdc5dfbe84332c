"""Edges of the pipeline: workbook format, reader and template, units, JSON and file output."""
