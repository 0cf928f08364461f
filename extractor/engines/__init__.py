"""Extraction engines: each turns PDF pages into positioned words and ruling lines.

Every engine returns the same `PageContent` (extractor.engines.base), in the one coordinate
convention of extractor.records (points, top-left origin of the displayed page). Table
assembly (extractor.assemble) is shared, so engines that read the same words produce the
same circuit records.
"""
