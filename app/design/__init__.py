"""The design recipe: declarative steps that turn a Table into (X, y).

Must not do linear algebra beyond building columns; the core diagnoses.
"""
