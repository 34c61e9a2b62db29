"""Reading user files into typed tables; errors that name file, row and column.

Must not know about design recipes, the numerical core or the web.
"""
