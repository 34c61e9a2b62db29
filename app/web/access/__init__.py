"""Access and guard: who may reach the server (Host, Origin, security headers), who may do what
(tokens, links), and what a request may cost (body size, lanes, limits). Never reads data.
"""
