"""Rule sets: the quantities a rule can name, the engine that applies rules, and rule files.

The public API, for callers outside this package::

    load_rule_set(path=None) -> RuleSet       parse_rule_set(data, path=None) -> RuleSet
    evaluate(rule_set, result) -> Verdict     apply_verdict(result, verdict)
    apply_rules(result, rules_path)           default_rule_set_path()
"""
from screening.verdict.engine import (
                                      Finding,
                                      KnownQuantities,
                                      RuleSet,
                                      Verdict,
                                      apply_verdict,
                                      constant_quantities,
                                      evaluate,
)
from screening.verdict.quantities import (
                                      QUANTITIES,
                                      VERDICTS,
                                      Quantity,
                                      describe_quantities,
)
from screening.verdict.rule_file import (
                                      RuleSetError,
                                      apply_rules,
                                      default_rule_set_path,
                                      load_rule_set,
                                      parse_rule_set,
)

__all__ = ["Finding", "KnownQuantities", "QUANTITIES", "Quantity", "RuleSet", "RuleSetError", "VERDICTS", "Verdict",
           "apply_rules", "apply_verdict", "constant_quantities", "default_rule_set_path", "describe_quantities",
           "evaluate", "load_rule_set", "parse_rule_set"]
