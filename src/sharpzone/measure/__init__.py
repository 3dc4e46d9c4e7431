"""Blur measured from a frame's own pixels: the estimator (``defocus``, pure) and the
service that runs it over ingested frames (``service``)."""
