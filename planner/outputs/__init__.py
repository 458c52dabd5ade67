"""Stage 9, outputs: the plan folder (writer and reader), printed text, observing sheets, figures and report."""
