"""zsplan for QGIS: check cable routes drawn in QGIS with the zsplan engine.

QGIS calls :func:`classFactory` to load the plugin.  The engine, the
geometry rules and the palette are the ``zsplan`` package's; this plugin
only turns layers into a plan and results back into a styled layer.
"""


def classFactory(iface):  # noqa: N802 (the name QGIS looks for)
    """Create the plugin object (called by QGIS)."""
    from .plugin import ZsplanPlugin
    return ZsplanPlugin(iface)
