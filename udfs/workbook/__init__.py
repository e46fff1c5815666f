"""A workbook computed and written without a spreadsheet program: its formulas read and ordered by
dependency (``formula``, ``dependencies``, ``arithmetic``), computed (``compute``), written under the spill
rules (``spill``) with an audit trail (``audit``), in processes for a large one (``processes``, ``spool``),
and the file replaced safely (``files``); ``sections`` reads a computed workbook for the report and the demo.
The commands (``degreewise refresh``, ``freeze``, ``report``, ``demo``) are built on it."""
