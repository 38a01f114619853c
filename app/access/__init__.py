"""Access to a served Tallyroom: hosts, headers, sessions, roles and cross-site write refusal.

`install_access(app)` in app/access/setup.py wires it all; routes declare who may call them
with `@allow(Role.…)` from app/access/roles.py (undeclared routes need an editor).
"""
