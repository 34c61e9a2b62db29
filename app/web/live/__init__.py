"""The live feed: who watches which session and the server-sent events that tell their pages of
a new version. Must not render, analyse or change a session.
"""
