"""The terminal UI of partsdb (Textual): a thin face over :mod:`partsdb.services`.

Entry points: :func:`tui.app.build_app` (also used by the tests) and :func:`tui.app.run_app`.
"""
