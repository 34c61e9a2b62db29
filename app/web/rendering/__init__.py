"""Rendering: an Analysis turned into HTML pages, fragments, figure data and downloads. Must not
compute statistics, handle HTTP or write to the store.
"""
