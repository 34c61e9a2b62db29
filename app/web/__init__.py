"""The local web app: its FastAPI app, serving and analyst; routes/, access/, live/, rendering/.

No linear algebra here: every screen is a view of a Diagnosis from rankscope.core.
"""
