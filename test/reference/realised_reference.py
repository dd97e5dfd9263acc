"""Independent reference for the realised-performance figures of a statement.

Written from the product contract alone (docs/spec/book.md and docs/spec/methods.md,
sections "Periods and windows" to "Realised risk", read as docs/interpretations.md
records), without the TypeScript sources, so that its numbers can cross-check the
tool and be stored as expected values in tests.

Run:
    python3 test/reference/realised_reference.py BOOK_FOLDER PERIOD > reference.json
e.g. python3 test/reference/realised_reference.py data/demo 2026-Q3
(Python 3.11, NumPy 2.4.6, SciPy 1.17.1, PyYAML 6.0.3.)

What it computes, per account, with the keys of figures.json:
- value: start, end, net_external_flows, income, fees, taxes of the period;
- returns.<window> for period, ytd, 1y, 3y, 5y, since_inception: start,
  annualised, twr_net, twr_gross, mwr, benchmark, excess_arithmetic,
  excess_geometric (null when the window starts before the since-inception start);
- realised_risk: months, volatility, tracking_error, information_ratio, sharpe,
  max_drawdown (null with fewer than 12 complete months).

Methods, as the contract states them:
- Valuation at the close of every calendar day from the since-inception start
  (the day before inception) to the period end: quantity x price x multiplier x
  FX, plus cash per currency x FX; price and FX the latest on or before the day.
  FX: direct quote, else inverse, else a cross via one intermediate currency
  (alphabetical), each leg direct or inverse and carried forward on its own.
- External flows count at the start of their day: deposits, withdrawals, and
  transfers in or out at that day's close price and FX; for gross-of-fee returns
  also `fee` rows (as outflows).
- True daily time-weighted return: r_d = V_d / (V_{d-1} + F_d) - 1, chained over
  the window's days; a day with nothing invested (V_{d-1} + F_d = 0, V_d = 0) has
  r_d = 0. Source (cited from memory): Bacon (2008), Practical Portfolio
  Performance Measurement and Attribution, 2nd ed., Wiley, ch. 2 (true
  time-weighted and money-weighted returns).
- Money-weighted return: the r with sum CF_i (1 + r)^(-t_i / 365) = 0, t_i the
  days from the window start to the close of the day before the flow, the end
  value at t = end - start; solved with scipy.optimize.brentq in a bracket found
  by scanning; no root or several roots gives null. Annual rate for annualised
  windows, else the window's own rate (1 + r)^(days / 365) - 1.
- Benchmark: mandate weights on index levels, rebalanced at each calendar month
  start, chain-linked; a window starting inside a month takes its first partial
  month from the index levels at the window's start close.
- Annualisation (1 + R)^(1 / n) - 1: n = 1, 3, 5 for the 1, 3 and 5 year windows;
  n = 1 for a period or year-to-date window spanning a whole calendar year;
  n = days / 365.25 for since inception when it is at least 365 days long.
  Excess returns of annualised windows use the annualised returns.
- Realised risk over the complete calendar months ending at the period end whose
  start close is on or after the since-inception start, at most the last 36:
  sample standard deviations (n - 1) x sqrt(12), information and Sharpe ratios
  from Prod(1 + r_m)^(12 / n) - 1, and the maximum drawdown of the daily net TWR
  index since inception. Sources (cited from memory): Sharpe (1966), "Mutual Fund
  Performance", Journal of Business 39(1); Grinold & Kahn (2000), Active
  Portfolio Management, 2nd ed. (information ratio); maximum drawdown is common
  practice.

It reads a valid book and does not repeat the tool's validation (for example the
check of a trade's `amount` against quantity x price x multiplier +- fees: the
cash effect is always computed from quantity, price, multiplier and fees).
"""
import bisect
import csv
import datetime as dt
import json
import math
import sys
from pathlib import Path

import numpy as np
import yaml
from scipy.optimize import brentq

WHOLE_YEARS = {"1y": 1, "3y": 3, "5y": 5}
EXTERNAL_FLOW_TYPES = ("deposit", "withdrawal", "transfer_in", "transfer_out")
CASH_ROW_TYPES = ("deposit", "withdrawal", "dividend", "interest", "fee", "tax")
TRADE_TYPES = ("buy", "sell")
TRANSFER_TYPES = ("transfer_in", "transfer_out")
ONE_DAY = dt.timedelta(days=1)
QUANTITY_TOLERANCE = 1e-9  # a holding smaller than this after a sale is zero


class BookError(Exception):
    """A problem with the book that stops one account (or the whole run)."""


# ---------------------------------------------------------------------------
# Dates and periods


def parse_date(text):
    return dt.date.fromisoformat(text)


def last_day_of_month(year, month):
    if month == 12:
        return dt.date(year, 12, 31)
    return dt.date(year, month + 1, 1) - ONE_DAY


def period_bounds(label):
    """Start close and end close of a period YYYY, YYYY-MM or YYYY-Qn."""
    if len(label) == 4 and label.isdigit():
        year = int(label)
        return dt.date(year - 1, 12, 31), dt.date(year, 12, 31)
    if len(label) == 7 and label[4] == "-" and label[5] == "Q" and label[6] in "1234":
        year, quarter = int(label[:4]), int(label[6])
        first_month = 3 * quarter - 2
        return dt.date(year, first_month, 1) - ONE_DAY, last_day_of_month(year, first_month + 2)
    if len(label) == 7 and label[4] == "-" and label[5:].isdigit() and 1 <= int(label[5:]) <= 12:
        year, month = int(label[:4]), int(label[5:])
        end = last_day_of_month(year, month)
        return dt.date(year, month, 1) - ONE_DAY, end
    raise BookError(f"period {label!r} is not YYYY, YYYY-MM or YYYY-Qn")


def window_starts(period_start, period_end, since_inception_start):
    """The close each window starts from (before dropping those before inception)."""
    starts = {
        "period": period_start,
        "ytd": dt.date(period_end.year - 1, 12, 31),
    }
    for name, years in WHOLE_YEARS.items():
        starts[name] = last_day_of_month(period_end.year - years, period_end.month)
    starts["since_inception"] = since_inception_start
    return starts


def days_between(start, end):
    return [start + dt.timedelta(days=k) for k in range((end - start).days + 1)]


# ---------------------------------------------------------------------------
# Reading the book


def read_csv(path):
    """Rows of a CSV file as dicts; empty fields become None."""
    with open(path, newline="", encoding="utf-8-sig") as handle:
        rows = []
        for line_number, row in enumerate(csv.DictReader(handle), start=2):
            clean = {key: (value if value not in ("", None) else None) for key, value in row.items()}
            clean["_line"] = line_number
            rows.append(clean)
        return rows


class CarriedSeries:
    """A dated series read as 'the latest value on or before a date'."""

    def __init__(self, name):
        self.name = name
        self.points = {}

    def add(self, date, value, where):
        if date in self.points:
            raise BookError(f"{where}: second value for {self.name} on {date}")
        self.points[date] = value

    def freeze(self):
        self.dates = sorted(self.points)
        self.values = [self.points[d] for d in self.dates]

    def at(self, date):
        """Latest value on or before date, or None when there is none yet."""
        position = bisect.bisect_right(self.dates, date)
        if position == 0:
            return None
        return self.values[position - 1]


class FxTable:
    """fx.csv: one unit of `from` is worth `rate` units of `to`."""

    def __init__(self, rows):
        self.quotes = {}
        for row in rows:
            pair = (row["from"], row["to"])
            series = self.quotes.setdefault(pair, CarriedSeries(f"{pair[0]}/{pair[1]}"))
            rate = float(row["rate"])
            if not rate > 0:
                raise BookError(f"fx.csv:{row['_line']}: rate must be positive, found {row['rate']}")
            series.add(parse_date(row["date"]), rate, f"fx.csv:{row['_line']}")
        for series in self.quotes.values():
            series.freeze()
        self.currencies = sorted({c for pair in self.quotes for c in pair})

    def leg(self, from_currency, to_currency, date):
        """Direct quote if one exists on or before date, else the inverse one, else None."""
        direct = self.quotes.get((from_currency, to_currency))
        if direct is not None and direct.at(date) is not None:
            return direct.at(date)
        inverse = self.quotes.get((to_currency, from_currency))
        if inverse is not None and inverse.at(date) is not None:
            return 1.0 / inverse.at(date)
        return None

    def rate(self, from_currency, to_currency, date):
        if from_currency == to_currency:
            return 1.0
        rate = self.leg(from_currency, to_currency, date)
        if rate is not None:
            return rate
        for middle in self.currencies:
            if middle in (from_currency, to_currency):
                continue
            first = self.leg(from_currency, middle, date)
            second = self.leg(middle, to_currency, date)
            if first is not None and second is not None:
                return first * second
        raise BookError(f"no FX path from {from_currency} to {to_currency} on {date}")


def load_book(folder):
    folder = Path(folder)
    settings = yaml.safe_load((folder / "book.yaml").read_text(encoding="utf-8-sig")) or {}
    mandates = yaml.safe_load((folder / "mandates.yaml").read_text(encoding="utf-8-sig")) or {}
    instruments = {row["instrument"]: row for row in read_csv(folder / "instruments.csv")}
    prices = {}
    for row in read_csv(folder / "prices.csv"):
        if row["instrument"] not in instruments:
            raise BookError(f"prices.csv:{row['_line']}: unknown instrument {row['instrument']}")
        series = prices.setdefault(row["instrument"], CarriedSeries(row["instrument"]))
        series.add(parse_date(row["date"]), float(row["price"]), f"prices.csv:{row['_line']}")
    for series in prices.values():
        series.freeze()
    fx = FxTable(read_csv(folder / "fx.csv"))
    accounts = read_csv(folder / "accounts.csv")
    transactions = {}
    for row in read_csv(folder / "transactions.csv"):
        transactions.setdefault(row["account"], []).append(row)
    return {
        "settings": settings,
        "mandates": mandates,
        "instruments": instruments,
        "prices": prices,
        "fx": fx,
        "accounts": accounts,
        "transactions": transactions,
    }


def multiplier_of(instrument):
    return float(instrument["multiplier"]) if instrument.get("multiplier") else 1.0


def price_on(book, instrument_id, date):
    series = book["prices"].get(instrument_id)
    price = series.at(date) if series is not None else None
    if price is None:
        raise BookError(f"no price of {instrument_id} on or before {date}")
    return price


def number(row, column):
    text = row.get(column)
    if text is None:
        raise BookError(f"transactions.csv:{row['_line']}: {row['type']} needs {column}")
    value = float(text)
    if value < 0:
        raise BookError(f"transactions.csv:{row['_line']}: {column} must be non-negative, found {text}")
    return value


# ---------------------------------------------------------------------------
# Ledger: replay the transactions, value every close


def inception_date(account, rows):
    """accounts.csv `inception`, else the date of the first external flow."""
    if account.get("inception"):
        return parse_date(account["inception"])
    flow_dates = [parse_date(row["date"]) for row in rows if row["type"] in EXTERNAL_FLOW_TYPES]
    if not flow_dates:
        raise BookError(f"account {account['account']} has no external flow and no inception date")
    return min(flow_dates)


def replay_account(book, account, rows, first_close, last_close):
    """Daily closes from first_close to last_close.

    Returns a list of dicts, one per calendar day, with the account value V at
    the close and, for that day, the net external flow (F_net), the fee rows
    (fees), income and taxes, all in the base currency at that day's FX.
    """
    base = account["base_currency"]
    fx = book["fx"]
    rows_by_day = {}
    for row in rows:
        rows_by_day.setdefault(parse_date(row["date"]), []).append(row)
    earliest = min([first_close] + list(rows_by_day))
    quantities = {}
    cash = {}
    closes = []
    for day in days_between(earliest, last_close):
        flow_net = fees = income = taxes = 0.0
        for row in rows_by_day.get(day, []):
            kind = row["type"]
            if kind in CASH_ROW_TYPES:
                currency = row["currency"] or base
                amount = number(row, "amount")
                amount_base = amount * fx.rate(currency, base, day)
                sign = +1.0 if kind in ("deposit", "dividend", "interest") else -1.0
                cash[currency] = cash.get(currency, 0.0) + sign * amount
                if kind == "deposit":
                    flow_net += amount_base
                elif kind == "withdrawal":
                    flow_net -= amount_base
                elif kind == "fee":
                    fees += amount_base
                elif kind == "tax":
                    taxes += amount_base
                else:
                    income += amount_base
            elif kind in TRADE_TYPES or kind in TRANSFER_TYPES:
                instrument_id = row["instrument"]
                instrument = book["instruments"].get(instrument_id)
                if instrument is None:
                    raise BookError(f"transactions.csv:{row['_line']}: unknown instrument {instrument_id}")
                quantity = number(row, "quantity")
                sign = +1.0 if kind in ("buy", "transfer_in") else -1.0
                held = quantities.get(instrument_id, 0.0) + sign * quantity
                if held < -QUANTITY_TOLERANCE:
                    raise BookError(f"transactions.csv:{row['_line']}: {kind} of {quantity} "
                                    f"{instrument_id} is more than the holding")
                quantities[instrument_id] = 0.0 if abs(held) <= QUANTITY_TOLERANCE else held
                multiplier = multiplier_of(instrument)
                if kind in TRADE_TYPES:
                    currency = row["currency"] or instrument["currency"]
                    commission = float(row["fees"]) if row.get("fees") else 0.0
                    gross = quantity * number(row, "price") * multiplier
                    cash_effect = -(gross + commission) if kind == "buy" else gross - commission
                    cash[currency] = cash.get(currency, 0.0) + cash_effect
                else:
                    market_value = (quantity * price_on(book, instrument_id, day) * multiplier
                                    * fx.rate(instrument["currency"], base, day))
                    flow_net += sign * market_value
            else:
                raise BookError(f"transactions.csv:{row['_line']}: unknown type {kind!r}")
        if day < first_close:
            continue
        value = 0.0
        for instrument_id, quantity in quantities.items():
            if quantity == 0.0:
                continue
            instrument = book["instruments"][instrument_id]
            value += (quantity * price_on(book, instrument_id, day) * multiplier_of(instrument)
                      * fx.rate(instrument["currency"], base, day))
        for currency, balance in cash.items():
            if balance != 0.0:
                value += balance * fx.rate(currency, base, day)
        closes.append({"date": day, "V": value, "F_net": flow_net, "fees": fees,
                       "income": income, "taxes": taxes})
    return closes


# ---------------------------------------------------------------------------
# Returns


def daily_returns(closes, gross_of_fees):
    """r_d = V_d / (V_{d-1} + F_d) - 1 for every close after the first."""
    returns = [0.0]  # the first close only starts the chain
    for previous, today in zip(closes, closes[1:]):
        flow = today["F_net"] - (today["fees"] if gross_of_fees else 0.0)
        invested = previous["V"] + flow
        if invested == 0.0 and today["V"] == 0.0:
            returns.append(0.0)
        elif invested == 0.0:
            raise BookError(f"nothing invested at the start of {today['date']} but a value at its close")
        else:
            returns.append(today["V"] / invested - 1.0)
    return returns


def chained(returns):
    growth = 1.0
    for r in returns:
        growth *= 1.0 + r
    return growth - 1.0


def npv(cash_flows, window_log_growth, window_days):
    """Sum CF_i (1 + r)^(-t_i/365), written with ln(1 + r) = window_log_growth * 365 / window_days."""
    return sum(amount * math.exp(-window_log_growth * t / window_days) for t, amount in cash_flows)


def money_weighted_return(cash_flows, window_days, annualised):
    """MWR of (t_days, amount) cash flows, or None when there is no single root.

    The unknown is y = ln(1 + r) * days / 365, the log growth over the window.
    NPV(y) is scanned on a grid over y in [-50, 50] (growth factors e^-50 to
    e^50); exactly one sign change brackets the root for brentq, none or several
    mean no root or several roots (unavailable, never guessed).
    """
    grid = np.linspace(-50.0, 50.0, 20001)
    times = np.array([t for t, _ in cash_flows], dtype=float)
    amounts = np.array([amount for _, amount in cash_flows])
    values = amounts @ np.exp(-np.outer(times, grid) / window_days)
    exact_roots = [y for y, v in zip(grid, values) if v == 0.0]
    brackets = [(a, b) for a, b, va, vb in zip(grid, grid[1:], values, values[1:]) if va * vb < 0]
    if len(brackets) + len(exact_roots) != 1:
        return None
    if exact_roots:
        log_growth = exact_roots[0]
    else:
        low, high = brackets[0]
        log_growth = brentq(lambda y: npv(cash_flows, y, window_days), low, high,
                            xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=200)
    if annualised:
        return math.exp(log_growth * 365.0 / window_days) - 1.0
    return math.exp(log_growth) - 1.0


def benchmark_month_pieces(window_start, window_end):
    """(start close, end close) of each calendar month (or part) inside the window."""
    pieces = []
    start = window_start
    while start < window_end:
        next_day = start + ONE_DAY
        end = min(last_day_of_month(next_day.year, next_day.month), window_end)
        pieces.append((start, end))
        start = end
    return pieces


def composite_return(book, weights, start, end):
    """One month (or part month) of the composite: sum w_i (L_i(end) / L_i(start) - 1)."""
    return sum(weight * (price_on(book, index_id, end) / price_on(book, index_id, start) - 1.0)
               for index_id, weight in weights.items())


def benchmark_return(book, weights, window_start, window_end):
    return chained([composite_return(book, weights, a, b)
                    for a, b in benchmark_month_pieces(window_start, window_end)])


def annualise(total_return, years):
    return (1.0 + total_return) ** (1.0 / years) - 1.0


def annualisation_years(window, start, end):
    """n for (1 + R)^(1/n) - 1, or None when the window is not annualised."""
    days = (end - start).days
    if window in WHOLE_YEARS:
        return WHOLE_YEARS[window]
    if window in ("period", "ytd") and days >= 365:
        return 1  # a whole calendar year: a calendar-year period, or YTD at a December end
    if window == "since_inception" and days >= 365:
        return days / 365.25
    return None


# ---------------------------------------------------------------------------
# One account


def account_figures(book, account, period_start, period_end):
    rows = [row for row in book["transactions"].get(account["account"], [])
            if parse_date(row["date"]) <= period_end]
    inception = inception_date(account, rows)
    since_inception_start = inception - ONE_DAY
    if since_inception_start >= period_end:
        raise BookError(f"account {account['account']} starts after the period end")
    closes = replay_account(book, account, rows, since_inception_start, period_end)
    index_of = {close["date"]: k for k, close in enumerate(closes)}
    net_returns = daily_returns(closes, gross_of_fees=False)
    gross_returns = daily_returns(closes, gross_of_fees=True)
    weights = book["mandates"][account["mandate"]]["benchmark"]

    # Flows, income, fees and taxes of the period: the closes after the period
    # start, or after the since-inception start for an account opened inside it.
    in_period = closes[index_of[max(period_start, since_inception_start)] + 1:]
    value = {
        "start": closes[index_of[period_start]]["V"] if period_start >= since_inception_start else 0.0,
        "end": closes[-1]["V"],
        "net_external_flows": sum(c["F_net"] for c in in_period),
        "income": sum(c["income"] for c in in_period),
        "fees": sum(c["fees"] for c in in_period),
        "taxes": sum(c["taxes"] for c in in_period),
    }

    returns = {}
    for window, start in window_starts(period_start, period_end, since_inception_start).items():
        if start < since_inception_start:
            returns[window] = None
            continue
        first, last = index_of[start], index_of[period_end]
        days = (period_end - start).days
        twr_net = chained(net_returns[first + 1:last + 1])
        twr_gross = chained(gross_returns[first + 1:last + 1])
        bench = benchmark_return(book, weights, start, period_end)
        cash_flows = [(0, -closes[first]["V"])]
        for k in range(first + 1, last + 1):
            if closes[k]["F_net"] != 0.0:
                cash_flows.append(((closes[k]["date"] - start).days - 1, -closes[k]["F_net"]))
        cash_flows.append((days, closes[last]["V"]))
        years = annualisation_years(window, start, period_end)
        mwr = money_weighted_return(cash_flows, days, annualised=years is not None)
        if years is not None:
            twr_net, twr_gross, bench = (annualise(twr_net, years), annualise(twr_gross, years),
                                         annualise(bench, years))
        returns[window] = {
            "start": start.isoformat(),
            "annualised": years is not None,
            "twr_net": twr_net,
            "twr_gross": twr_gross,
            "mwr": mwr,
            "benchmark": bench,
            "excess_arithmetic": twr_net - bench,
            "excess_geometric": (1.0 + twr_net) / (1.0 + bench) - 1.0,
        }

    return {
        "inception": inception.isoformat(),
        "value": value,
        "returns": returns,
        "realised_risk": realised_risk(book, weights, closes, index_of, net_returns,
                                       since_inception_start, period_end),
    }


def realised_risk(book, weights, closes, index_of, net_returns, since_inception_start, period_end):
    months = []  # (start close, end close), oldest first
    end = period_end
    while len(months) < 36:
        start = dt.date(end.year, end.month, 1) - ONE_DAY
        if start < since_inception_start:
            break
        months.insert(0, (start, end))
        end = start
    if len(months) < 12:
        return None
    portfolio = np.array([chained(net_returns[index_of[a] + 1:index_of[b] + 1]) for a, b in months])
    benchmark = np.array([composite_return(book, weights, a, b) for a, b in months])
    count = len(months)

    def annualised_over_months(monthly):
        return float(np.prod(1.0 + np.asarray(monthly)) ** (12.0 / count) - 1.0)

    risk_free = book["settings"].get("risk_free", 0)
    if isinstance(risk_free, str):
        risk_free_annual = annualised_over_months(
            [price_on(book, risk_free, b) / price_on(book, risk_free, a) - 1.0 for a, b in months])
    else:
        risk_free_annual = float(risk_free)

    volatility = float(np.std(portfolio, ddof=1) * math.sqrt(12))
    tracking_error = float(np.std(portfolio - benchmark, ddof=1) * math.sqrt(12))
    portfolio_annual = annualised_over_months(portfolio)
    benchmark_annual = annualised_over_months(benchmark)

    level, peak, max_drawdown = 1.0, 1.0, 0.0  # daily net TWR index, 1 at the since-inception start
    for r in net_returns[index_of[since_inception_start] + 1:]:
        level *= 1.0 + r
        peak = max(peak, level)
        max_drawdown = max(max_drawdown, 1.0 - level / peak)

    return {
        "months": count,
        "first_month": months[0][1].strftime("%Y-%m"),
        "last_month": months[-1][1].strftime("%Y-%m"),
        "volatility": volatility,
        "tracking_error": tracking_error,
        # a ratio over a zero spread is undefined: null, never infinity
        "information_ratio": ((portfolio_annual - benchmark_annual) / tracking_error
                              if tracking_error > 0 else None),
        "sharpe": (portfolio_annual - risk_free_annual) / volatility if volatility > 0 else None,
        "max_drawdown": max_drawdown,
    }


def main(argv):
    if len(argv) != 3:
        sys.exit("usage: realised_reference.py BOOK_FOLDER PERIOD")
    book = load_book(argv[1])
    period_start, period_end = period_bounds(argv[2])
    out = {"period": {"label": argv[2], "start": period_start.isoformat(), "end": period_end.isoformat()},
           "accounts": {}}
    for account in book["accounts"]:
        try:
            out["accounts"][account["account"]] = account_figures(book, account, period_start, period_end)
        except BookError as error:
            out["accounts"][account["account"]] = {"error": str(error)}
    json.dump(out, sys.stdout, indent=1)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main(sys.argv)
