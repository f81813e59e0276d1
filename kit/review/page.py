"""The printed page of a design review: one geometry for the template and its checker.

The review template sets its ``@page`` rule and the width of its screen
column from :data:`REVIEW_PAGE`, and :mod:`kit.review.printcheck` lays the
page out at the same printable width, so a change of paper or margins
reaches both at once.

Examples
--------
>>> round(REVIEW_PAGE.content_width_px, 1)
687.9
>>> REVIEW_PAGE.css()
'size: 210mm 297mm; margin: 16mm 14mm 18mm 14mm;'
"""

from __future__ import annotations

from dataclasses import dataclass

MM_PER_INCH = 25.4
CSS_PX_PER_INCH = 96.0  # a CSS pixel is 1/96 inch (CSS Values and Units, section 6.2)
PT_PER_INCH = 72.0  # a PDF point


@dataclass(frozen=True)
class PageGeometry:
    """A sheet and its margins, in millimetres.

    Parameters
    ----------
    width, height : float
        The sheet (A4 is 210 mm x 297 mm, ISO 216).
    top, right, bottom, left : float
        Margins; the footer with the page numbers is printed in the bottom one.
    """

    width: float = 210.0
    height: float = 297.0
    top: float = 16.0
    right: float = 14.0
    bottom: float = 18.0
    left: float = 14.0

    @property
    def content_width(self):
        """Printable width in mm."""
        return self.width - self.left - self.right

    @property
    def content_height(self):
        """Printable height in mm."""
        return self.height - self.top - self.bottom

    @property
    def content_width_px(self):
        """Printable width in CSS pixels: the width a browser lays the page out at."""
        return self.content_width / MM_PER_INCH * CSS_PX_PER_INCH

    @property
    def content_height_px(self):
        """Printable height in CSS pixels."""
        return self.content_height / MM_PER_INCH * CSS_PX_PER_INCH

    def css(self):
        """Declarations for a CSS ``@page`` rule."""
        def mm(value):
            return f"{value:g}mm"

        return (f"size: {mm(self.width)} {mm(self.height)}; "
                f"margin: {mm(self.top)} {mm(self.right)} {mm(self.bottom)} {mm(self.left)};")


# A4 with room for the footer at the bottom.
REVIEW_PAGE = PageGeometry()
