"""The xlsx file format: the zip package read safely, its XML parts, cells and addresses, and surgical
edits of sheet XML. Knows nothing of the CALIB_* family; the refresh, freeze and report use it."""


class PackageError(Exception):
    """The file cannot be refreshed safely; the message is one line for the user."""
