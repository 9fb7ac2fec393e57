"""Rule decks, rule explanations and the evaluation of an Analysis into findings.

    deck = load_deck("default", project)          # or a path; None: the project's choice
    evaluation = evaluate_all(analysis, deck, project)
    evaluation.findings, evaluation.checks
"""

from .deck import Deck, Rule, load_deck, packaged_decks
from .docs import RULE_DOCS, RuleDoc, explain_text, rule_doc
from .evaluate import Check, Evaluation, at_or_above, evaluate, evaluate_all

__all__ = ["Deck", "Rule", "load_deck", "packaged_decks", "RULE_DOCS", "RuleDoc", "explain_text",
           "rule_doc", "Check", "Evaluation", "at_or_above", "evaluate", "evaluate_all"]
