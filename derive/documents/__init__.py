"""Document types: results described once, format-neutrally, for the one renderer registry.

* ``sheet.SheetDocument``: the calculation sheet of a ``Solution`` (its steps
  described by ``sheet_steps.STEP_BLOCKS``, one function per step kind);
* ``check_report.CheckReportDocument``: the check of a hand derivation;
* ``batch_index.BatchIndexDocument``: the index of a batch of sheets.

``base.Document`` is the contract (layout -> blocks, record -> plain data,
frame -> page furniture); ``blocks`` holds the block kinds.  Renderers live in
``derive.render``; files are written by ``derive.output.write_outputs``.
"""
