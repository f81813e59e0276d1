"""Design-review PDFs from design notebooks and records (see :mod:`kit.review.build`).

``review_summary`` is light; building a PDF needs the notebook extras
(nbclient, nbconvert, jupyter-server-mathjax) and Chromium.
"""

from kit.review.summary import ReviewSummary, review_summary

__all__ = ["ReviewSummary", "review_summary", "build_review"]


def build_review(*args, **kwargs):
    """See :func:`kit.review.build.build_review`."""
    from kit.review.build import build_review as build

    return build(*args, **kwargs)
