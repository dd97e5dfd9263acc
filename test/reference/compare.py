"""Compare the tool's figures.json files with the independent reference.

Run:
    python3 test/reference/realised_reference.py BOOK PERIOD > reference.json
    node bin/quarterline.js build BOOK --period PERIOD --out OUT --no-pdf
    python3 test/reference/compare.py reference.json OUT/PERIOD

Compares, for every account of the reference: value.* to 0.01 (money),
returns.<window>.{twr_net, twr_gross, mwr, benchmark, excess_arithmetic,
excess_geometric} and realised_risk.{volatility, tracking_error,
information_ratio, sharpe, max_drawdown} to 1e-9 (absolute), and
returns.<window>.{start, annualised} and realised_risk.{months, first_month,
last_month} exactly; a null on
one side must be a null on the other. Prints one line per discrepancy
(account, key, tool value, reference value) and a summary; exits 1 when any
figure disagrees.
"""
import json
import sys
from pathlib import Path

MONEY_TOLERANCE = 0.01
RETURN_TOLERANCE = 1e-9
VALUE_KEYS = ("start", "end", "net_external_flows", "income", "fees", "taxes")
WINDOWS = ("period", "ytd", "1y", "3y", "5y", "since_inception")
WINDOW_EXACT_KEYS = ("start", "annualised")
WINDOW_RETURN_KEYS = ("twr_net", "twr_gross", "mwr", "benchmark", "excess_arithmetic", "excess_geometric")
RISK_EXACT_KEYS = ("months", "first_month", "last_month")
RISK_RETURN_KEYS = ("volatility", "tracking_error", "information_ratio", "sharpe", "max_drawdown")


class Comparison:
    def __init__(self):
        self.compared = 0
        self.discrepancies = []

    def check(self, account, key, tool, reference, tolerance):
        """tolerance None: must be equal; else |tool - reference| <= tolerance."""
        self.compared += 1
        if tool is None or reference is None:
            agree = tool is None and reference is None
        elif tolerance is None:
            agree = tool == reference
        else:
            agree = abs(tool - reference) <= tolerance
        if not agree:
            self.discrepancies.append((account, key, tool, reference))

    def block(self, account, prefix, tool_block, reference_block, exact_keys, tolerant_keys, tolerance):
        """Compare one block (a window, realised_risk); both null counts as one agreeing figure."""
        if tool_block is None or reference_block is None:
            self.check(account, prefix, tool_block and "present", reference_block and "present", None)
            return
        for key in exact_keys:
            self.check(account, f"{prefix}.{key}", tool_block.get(key), reference_block.get(key), None)
        for key in tolerant_keys:
            self.check(account, f"{prefix}.{key}", tool_block.get(key), reference_block.get(key), tolerance)


def compare(reference_path, tool_period_folder):
    reference = json.loads(Path(reference_path).read_text(encoding="utf-8"))
    comparison = Comparison()
    for account, expected in reference["accounts"].items():
        figures_path = Path(tool_period_folder) / "accounts" / account / "figures.json"
        if "error" in expected or not figures_path.exists():
            comparison.check(account, "reported", figures_path.exists(), "error" not in expected, None)
            continue
        tool = json.loads(figures_path.read_text(encoding="utf-8"))
        for key in VALUE_KEYS:
            comparison.check(account, f"value.{key}", tool["value"].get(key), expected["value"][key],
                             MONEY_TOLERANCE)
        for window in WINDOWS:
            comparison.block(account, f"returns.{window}", tool["returns"].get(window),
                             expected["returns"][window], WINDOW_EXACT_KEYS, WINDOW_RETURN_KEYS,
                             RETURN_TOLERANCE)
        comparison.block(account, "realised_risk", tool.get("realised_risk"), expected["realised_risk"],
                         RISK_EXACT_KEYS, RISK_RETURN_KEYS, RETURN_TOLERANCE)
    return comparison


def main(argv):
    if len(argv) != 3:
        sys.exit("usage: compare.py REFERENCE_JSON TOOL_PERIOD_FOLDER")
    comparison = compare(argv[1], argv[2])
    for account, key, tool, reference in comparison.discrepancies:
        difference = ""
        if isinstance(tool, (int, float)) and isinstance(reference, (int, float)) \
                and not isinstance(tool, bool) and not isinstance(reference, bool):
            difference = f"  (tool - reference = {tool - reference:.3e})"
        print(f"{account}  {key}  tool={tool!r}  reference={reference!r}{difference}")
    agreeing = comparison.compared - len(comparison.discrepancies)
    print(f"{comparison.compared} figures compared, {agreeing} agree, "
          f"{len(comparison.discrepancies)} differ")
    sys.exit(1 if comparison.discrepancies else 0)


if __name__ == "__main__":
    main(sys.argv)
