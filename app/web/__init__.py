"""The local inspection web app: FastAPI routes, session state, rendering of core results.

No linear algebra here: every screen is a view of a Diagnosis from app.core.
"""
