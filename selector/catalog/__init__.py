"""The parts library: SQL models, the store, importers and exporters.

Open a library with :func:`selector.catalog.store.open_library`; read its parts as
arrays with :meth:`~selector.catalog.store.Library.load_partset`.
"""
