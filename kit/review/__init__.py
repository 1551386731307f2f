"""Review stage: acceptance limits, verdicts and the reviewers' log.

* :mod:`kit.review.limits` - the limits file: read, validate, write (:func:`kit.load_limits`);
* :mod:`kit.review.verdicts` - pass, fail or incomplete with margins (:func:`kit.verdict`);
* :mod:`kit.review.drawing` - limits drawn on matplotlib axes;
* :mod:`kit.review.log` - the review log of notes and verdicts (:class:`kit.ReviewLog`), its
  shared API and the SQLite file;
* :mod:`kit.review.server` - the same log on a PostgreSQL server (``ReviewLog("postgresql://...")``);
* :mod:`kit.review.sync` - push, pull and status between a folder's file and the server.
"""
