"""One report builder per analysis: an analysis result in, a
:class:`~shufflecheck.report.document.Report` out."""
