"""Routes and pages: the HTTP surface (JSON API, pages, session routes, downloads, assets, the
reduction's progress). Must not compute linear algebra, build HTML itself or touch the store's SQL.
"""
