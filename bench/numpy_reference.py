#!/usr/bin/env python3
"""
A plain vectorized numpy computation of the bench scenario's volatilities, for the bench
to compare riskfold's speed with (`npm run bench`) and for a test to compare its figures
with riskfold's risk_daily (test/bench/numpyReference.test.ts).

It reads the history CSVs (prices, fx, positions) with numpy's own CSV reader and
computes, as the README's "The figures" defines them:
  - valuation dates: the dates on which a held security has a price; a missing price is
    carried forward at most --max-stale valuation dates;
  - values and weights in the base currency (price * fx, cash at price 1, weights
    summing to 1 with cash);
  - holdings-based portfolio returns R_t = sum_i w_i,t-1 (P_i,t / P_i,t-1 - 1) and
    r_p,t = ln(1 + R_t), then vol_realized and ann_return over each window;
  - vol_ex_ante = sqrt(A w_t' S_t w_t) for the sample covariance of each window
    (divisor W - 1) and for the EWMA covariance (zero mean, lambda, each security
    seeded from its first --seed-days returns with the EWMA weights rescaled to sum to
    one).
w_t' S_t w_t is the variance of the fixed-weight series r_u . w_t over the window's
dates u, so one matrix product per portfolio (returns x weights of every date) gives
every window's figure without building a covariance matrix.

Scope: the bench's data. Every held security must have a return on every date from the
second valuation date on (the bench prices every security from the first date; a price
missing for more than --max-stale dates is an error here, where riskfold would flag it).
Corrections (a second row for the same key) take the later row, as riskfold does.

Prints one JSON line: {"read_seconds", "compute_seconds", "figures"}; with --out, also
writes the figures as CSV. Exits 3 with a message on stderr when numpy is missing.
"""
import argparse
import json
import sys
import time

try:
    import numpy as np
except ImportError:
    sys.stderr.write('numpy_reference: numpy is not installed (pip install numpy)\n')
    sys.exit(3)


def read_csv(path, wanted):
    """The columns named in `wanted` ({name: dtype}), by the header's names, as one structured array."""
    with open(path, 'rb') as f:
        header = f.readline().decode().strip().split(',')
    missing = [name for name in wanted if name not in header]
    if missing:
        raise SystemExit(f'{path}: no column {", ".join(missing)}')
    names = [name for name in header if name in wanted]
    columns = [header.index(name) for name in names]
    dtype = [(name, wanted[name]) for name in names]
    return np.loadtxt(path, delimiter=',', skiprows=1, usecols=columns, dtype=dtype, ndmin=1)


def carried(values, max_stale):
    """Forward-fills NaNs down each column for at most max_stale rows; older stays NaN."""
    rows = np.arange(values.shape[0])[:, None]
    last = np.maximum.accumulate(np.where(np.isnan(values), -1, rows), axis=0)
    filled = values[np.maximum(last, 0), np.arange(values.shape[1])]
    filled[(last < 0) | (rows - last > max_stale)] = np.nan
    return filled


def dense(row, col, value, shape):
    """A NaN matrix with value[k] at (row[k], col[k]); of repeated cells the later row wins."""
    out = np.full(shape, np.nan)
    out[row, col] = value  # numpy assigns repeated indices in order: the last one stays
    return out


def window_series(m, window):
    """For each date t >= window: the window's values m[t - window + k, t], k = 0..window-1 (rows t = window..T-1)."""
    t = np.arange(window, m.shape[1])
    return m[(t - window)[:, None] + np.arange(window)[None, :], t[:, None]]


def main():
    parser = argparse.ArgumentParser(description=__doc__.split('\n\n')[0])
    parser.add_argument('--prices', required=True)
    parser.add_argument('--fx', required=True)
    parser.add_argument('--positions', required=True)
    parser.add_argument('--base', default='USD')
    parser.add_argument('--windows', default='21,63,252')
    parser.add_argument('--days-per-year', type=float, default=252)
    parser.add_argument('--max-stale', type=int, default=5)
    parser.add_argument('--lambda', dest='lam', type=float, default=0.94)
    parser.add_argument('--seed-days', type=int, default=21)
    parser.add_argument('--out', help='write the figures here as CSV')
    args = parser.parse_args()
    windows = [int(w) for w in args.windows.split(',')]
    base = args.base.encode()

    started = time.perf_counter()
    prices = read_csv(args.prices, {'date': 'S10', 'security_id': 'S32', 'price': 'f8', 'currency': 'S3'})
    fx = read_csv(args.fx, {'date': 'S10', 'currency': 'S3', 'rate': 'f8'})
    positions = read_csv(args.positions, {'date': 'S10', 'portfolio_id': 'S32', 'security_id': 'S32', 'quantity': 'f8'})
    read_seconds = time.perf_counter() - started

    started = time.perf_counter()
    dates, blocks = compute(prices, fx, positions, base, windows, args)
    compute_seconds = time.perf_counter() - started

    if args.out:
        write_figures(args.out, blocks, dates)
    print(json.dumps({'read_seconds': read_seconds, 'compute_seconds': compute_seconds, 'figures': sum(len(b[4][0]) for b in blocks)}))


def codes(text):
    """Distinct values of a fixed-width bytes column, in byte order, and each row's index into them.

    Sorting strings is slow: the bytes are read as big-endian 8-byte integers (integer
    order is byte order), one word at a time; np.unique of the words hashes, and each row
    finds its value by binary search among the few distinct ones, so no row is sorted."""
    width = -(-text.dtype.itemsize // 8) * 8
    words = np.ascontiguousarray(text.astype(f'S{width}')).view('>u8').reshape(len(text), -1)
    of = np.zeros(len(text), dtype=np.int64)
    for word in words.T:
        distinct = np.unique(word)
        of = of * len(distinct) + np.searchsorted(distinct, word)
        of = np.searchsorted(np.unique(of), of)
    first = np.empty(of.max(initial=-1) + 1, dtype=np.int64)
    first[of[::-1]] = np.arange(len(of) - 1, -1, -1)  # of repeated indices the last assignment stays: the first row
    return text[first], of


def compute(prices, fx, positions, base, windows, args):
    a = args.days_per_year
    position_ids, position_security = codes(positions['security_id'])
    is_cash = np.char.startswith(position_ids, b'CASH:')
    held_ids = position_ids[np.unique(position_security[positions['quantity'] != 0])]
    held = held_ids[~np.char.startswith(held_ids, b'CASH:')]
    cash_ids = position_ids[is_cash]

    # valuation dates: the dates a held security has a price
    price_ids, price_security = codes(prices['security_id'])
    price_dates, price_date = codes(prices['date'])
    priced = np.isin(price_security, np.flatnonzero(np.isin(price_ids, held)))
    dates = price_dates[np.unique(price_date[priced])]
    n_dates = len(dates)

    # prices in the base currency, (dates x securities): the held securities, then cash, a balance at price 1 in its currency
    securities = np.concatenate([held, cash_ids])
    column_of_price_id = np.searchsorted(held, price_ids).clip(max=len(held) - 1)
    row_of_price_date = np.searchsorted(dates, price_dates).clip(max=n_dates - 1)
    local = carried(dense(row_of_price_date[price_date[priced]], column_of_price_id[price_security[priced]], prices['price'][priced], (n_dates, len(held))), args.max_stale)
    last_row = np.zeros(len(price_ids), dtype=np.int64)
    last_row[price_security] = np.arange(len(prices))  # the last row of each security gives its currency
    currencies = prices['currency'][last_row[np.searchsorted(price_ids, held)]].tolist() + [c[5:] for c in cash_ids.tolist()]
    local = np.hstack([local, np.ones((n_dates, len(cash_ids)))])
    price = local * fx_matrix(fx, dates, currencies, base, args.max_stale)
    if np.isnan(price).any():
        raise SystemExit('numpy_reference: a held security has no price (or rate) on some valuation date: outside what this reference covers')

    log_returns = np.log(price[1:] / price[:-1])  # row u - 1 holds r_u, u = 1..T-1
    simple_returns = price[1:] / price[:-1] - 1

    lam, seed = args.lam, args.seed_days
    # EWMA weight of r_u in S_t (rows u = 1..T-1, columns t): (1 - lambda) lambda^(t - u); the
    # seed's returns (u <= seed), set at t = seed with weights rescaled to sum to one, decay alike
    u = np.arange(1, n_dates)[:, None]
    t = np.arange(n_dates)[None, :]
    ewma_weights = np.where(u <= t, (1 - lam) * lam ** np.maximum(t - u, 0), 0.0)
    ewma_weights[:seed, :] /= 1 - lam**seed

    # each position row's column in `securities` and snapshot date
    sorter = np.argsort(securities)
    column_of_position_id = sorter[np.searchsorted(securities, position_ids, sorter=sorter).clip(max=len(securities) - 1)]
    position_dates, position_date = codes(positions['date'])
    portfolio_ids, position_portfolio = codes(positions['portfolio_id'])
    order = np.argsort(position_portfolio, kind='stable')
    ends = np.cumsum(np.bincount(position_portfolio, minlength=len(portfolio_ids)))
    blocks = []
    for k, name in enumerate(portfolio_ids.tolist()):
        mine = order[(ends[k - 1] if k else 0) : ends[k]]
        mine = mine[positions['quantity'][mine] != 0]
        snapshot_codes, snapshot_of_row = np.unique(position_date[mine], return_inverse=True)
        snapshots = np.zeros((len(snapshot_codes), len(securities)))
        snapshots[snapshot_of_row, column_of_position_id[position_security[mine]]] = positions['quantity'][mine]
        blocks += portfolio_figures(name.decode(), position_dates[snapshot_codes], snapshots, dates, price, log_returns, simple_returns, ewma_weights, windows, a, seed)
    return dates, blocks


def fx_matrix(fx, dates, currencies, base, max_stale):
    """(dates x securities) units of base currency per unit of each security's currency, carried like prices."""
    names, name_of = codes(fx['currency'])
    fx_dates, date_of = codes(fx['date'])
    on = np.searchsorted(dates, fx_dates).clip(max=len(dates) - 1)
    inside = (dates[on] == fx_dates)[date_of]  # rates on dates that are not valuation dates are not read
    rates = carried(dense(on[date_of][inside], name_of[inside], fx['rate'][inside], (len(dates), len(names))), max_stale)
    rates = np.hstack([rates, np.ones((len(dates), 1))])  # the base currency's own column
    unknown = sorted({c.decode() for c in currencies if c != base and c not in names.tolist()})
    if unknown:
        raise SystemExit(f'numpy_reference: no fx rate for {", ".join(unknown)}')
    return rates[:, [len(names) if c == base else int(np.searchsorted(names, c)) for c in currencies]]


def portfolio_figures(name, snapshot_dates, snapshots, dates, price, log_returns, simple_returns, ewma_weights, windows, a, seed):
    """One portfolio's figures: a block (portfolio, estimator, window_days, first date row, columns) per estimator and window."""
    # full snapshots: each valuation date takes the portfolio's last snapshot on or before it
    current = np.searchsorted(snapshot_dates, dates, side='right') - 1
    quantity = np.where(current[:, None] >= 0, snapshots[np.maximum(current, 0)], 0.0)

    value = np.where(quantity != 0, quantity * price, 0.0)
    total = value.sum(axis=1)
    weights = value / np.where(total == 0, np.nan, total)[:, None]

    portfolio_returns = np.log1p(np.einsum('ij,ij->i', weights[:-1], simple_returns))  # r_p,t for t = 1..T-1
    along = log_returns @ weights.T  # along[u - 1, t] = r_u . w_t

    # one block per estimator and window: (estimator, window_days, first date row, columns from that row on)
    blocks = []
    for window in windows:
        vol_ex_ante = np.sqrt(a * window_series(along, window).var(axis=1, ddof=1))
        realized = np.lib.stride_tricks.sliding_window_view(portfolio_returns, window)  # row k: r_p of dates k+1..k+window
        vol_realized = np.sqrt(a) * realized.std(axis=1, ddof=1)
        ann_return = np.expm1(a * realized.mean(axis=1))
        blocks.append(('sample', window, window, [total[window:], vol_ex_ante, vol_realized, ann_return]))
    ewma = np.sqrt(a * np.einsum('ut,ut->t', ewma_weights, along * along))
    blocks.append(('ewma', 0, seed, [total[seed:], ewma[seed:], None, None]))
    return [(name, *block) for block in blocks]


def write_figures(path, blocks, dates):
    """The blocks as CSV rows, one per portfolio, date, estimator and window (an empty field: no such figure)."""
    day = [d.decode() for d in dates.tolist()]
    with open(path, 'w') as out:
        out.write('portfolio_id,date,estimator,window_days,portfolio_value,vol_ex_ante,vol_realized,ann_return\n')
        for name, estimator, window, first, columns in blocks:
            for k in range(len(columns[0])):
                fields = ['' if c is None else repr(float(c[k])) for c in columns]
                out.write(f"{name},{day[first + k]},{estimator},{window},{','.join(fields)}\n")

if __name__ == '__main__':
    main()
