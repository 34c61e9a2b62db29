"""The Python API for notebooks: inspect() a table, formula or fitted model; serve() it.

Shell code around the pipeline (tables -> design -> core); no numerics of its own. The
package's public names are reached lazily through app/__init__.py.
"""
