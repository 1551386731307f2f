"""Hand-over stage: what leaves the kit for other people and programs.

* :mod:`kit.outputs.entries` - the entries of a lot (captures or failures) and results by capture;
* :mod:`kit.outputs.tidy` - the sweeps as one long table (:func:`kit.tidy`);
* :mod:`kit.outputs.summary` - one row per capture (:func:`kit.summary`);
* :mod:`kit.outputs.handover` - the export folder with provenance (:func:`kit.export`);
* :mod:`kit.outputs.lot_report` - the self-contained HTML lot report (:func:`kit.report`), with
  :mod:`kit.outputs.lot_overview` (the lot as a whole) and :mod:`kit.outputs.part_figure`
  (one part's picture, :class:`~kit.outputs.part_figure.PartPainter`);
* :mod:`kit.outputs.decimate` - min/max decimation of long curves for display.

Touchstone files are written by :mod:`kit.io.writer` (:func:`kit.write_touchstone`).
"""
