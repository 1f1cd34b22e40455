"""A hand-scoring competency exercise for a sheet, and marking the answers.

`vignettes` draws patients that together use every printed row and the cases people get wrong; `key` scores
them with the audit's own paper scoring (`scorecard.audit.paper`, the `score` verb) and writes key.csv;
`pdf` lays out patient cards with answer grids and the key pages; `marking` marks staff answers against the
key, table by table.
"""

from scorecard.exercise.key import answer_key, key_csv_text, template_csv_text
from scorecard.exercise.marking import mark_answers
from scorecard.exercise.pdf import exercise_pdf_bytes
from scorecard.exercise.vignettes import draw_vignettes

__all__ = ["answer_key", "draw_vignettes", "exercise_pdf_bytes", "key_csv_text", "mark_answers", "template_csv_text"]
