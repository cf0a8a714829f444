"""The printable route card: drawing with Qt to PDF and to a printer.

The card's content is built without Qt by :func:`core.card.build_card`; this
package draws it (:mod:`app.card.render`) and offers ``roundsman card``
(:mod:`app.card.cli`).
"""

from app.card.render import page_count, print_card, rows_per_page, write_card_pdf, write_cards_pdf

__all__ = ["page_count", "print_card", "rows_per_page", "write_card_pdf", "write_cards_pdf"]
