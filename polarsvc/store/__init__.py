"""Storage layer: SQLAlchemy models, sessions, migrations and keyword-only storage functions
(no HTTP). Modules: :mod:`~polarsvc.store.db` (engines, sessions, migrations, backup),
:mod:`~polarsvc.store.models`, :mod:`~polarsvc.store.airfoils`, :mod:`~polarsvc.store.polars`,
:mod:`~polarsvc.store.blades`, :mod:`~polarsvc.store.derived`, :mod:`~polarsvc.store.tokens`,
:mod:`~polarsvc.store.audit`, :mod:`~polarsvc.store.errors`.
"""
