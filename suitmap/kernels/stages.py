"""Life stages in order through a season: event days, generations, the photoperiod cap.

Each stage has its own thresholds, hence its own daily degree-days, or its own
development-rate curve, hence its own daily development (rate summation: the
stage completes when the sum reaches 1); the caller passes one array of daily
progress per stage, and what each stage needs (its degree-days, or 1).  A
generation runs through the stages in order and starts the next generation
when its last stage completes.  Within a day development is taken as even (the
day's degree-days or development spread over 24 h), so a stage that completes
part-way through a day passes the rest of that day to the next stage at the
next stage's rate: with constant days the event days are exactly the hand
computation of cumulative degree-days (or of 1/rate days).

Photoperiod cap: a generation that *enters* its day-length-sensitive stage on
a day when the day is shorter than the critical day length and shortening
(after the summer solstice; the hemisphere follows from the day lengths)
enters diapause; it is not counted and no further generation starts that
season.  The first stage is entered at the biofix (first generation) or when
the previous generation completes.

Pure numba, no I/O.

References
----------
Degree-day stage models: e.g. Zalom et al. (1983) Degree-days: the calculation
and use of heat units in pest management, Univ. California DANR Leaflet 21373.
Rate summation (development as the sum of daily rates, complete at 1): e.g.
Worner (1992) Performance of phenological models under variable
temperature regimes, Environmental Entomology 21:689-699.
Photoperiodic induction of diapause below a critical day length: Danks (1987)
Insect dormancy: an ecological perspective, Biological Survey of Canada; Tauber,
Tauber & Masaki (1986) Seasonal adaptations of insects, Oxford Univ. Press.
"""

from __future__ import annotations

import numba
import numpy as np

__all__ = ["rule_start", "stage_walk"]


def rule_start(tmax: np.ndarray, after: int, threshold: float, days: int) -> np.ndarray:
    """Biofix by a rule: the first day index ``>= after`` that begins ``days`` consecutive
    days with ``tmax >= threshold`` (NaN never qualifies).

    Parameters
    ----------
    tmax : numpy.ndarray
        ``(..., n_days)`` daily maximum temperature.

    Returns
    -------
    numpy.ndarray of int64
        ``(...)``; ``n_days`` where no such run starts (never).

    References
    ----------
    # common practice, no source: a sustained-warmth start of accumulation, the
    # temperature form of a biofix (the trade's biofix is usually a first catch).
    """
    ok = np.asarray(tmax, dtype=np.float64) >= threshold
    nt = ok.shape[-1]
    csum = np.concatenate([np.zeros(ok.shape[:-1] + (1,)), np.cumsum(ok, axis=-1)], axis=-1)
    if days > nt:
        return np.full(ok.shape[:-1], nt, dtype=np.int64)
    run = (csum[..., days:] - csum[..., :-days]) == days        # run of `days` from index i
    run[..., :max(0, after)] = False
    hit = run.any(axis=-1)
    return np.where(hit, run.argmax(axis=-1), nt).astype(np.int64)


@numba.njit(cache=True, nogil=True)
def _walk(dd, need, share, starts, short, sens, first, gens, before):
    n_st, nc, nt = dd.shape
    use_cap = short.shape[0] > 0
    for c in range(nc):
        start = starts[c]
        bad = False
        for s in range(n_st):
            first[c, s] = np.nan
            for t in range(start, nt):
                if dd[s, c, t] != dd[s, c, t]:
                    bad = True
        if bad:
            gens[c] = np.nan
            before[c] = np.nan
            continue
        s = 0
        acc = 0.0        # degree-days of the current stage done
        cycles = 0
        stopped = False
        capped = -1.0
        if use_cap and sens == 0 and start < nt and short[c, start]:
            stopped = True             # the first generation enters its sensitive stage at the biofix
            capped = 0.0
        for t in range(start, nt):
            if stopped:
                break
            f = 1.0                    # fraction of the day left
            while f > 0.0 and not stopped:
                r = dd[s, c, t]
                if r <= 0.0:
                    break
                left = need[s] - acc
                if f * r >= left - 1e-9 * need[s]:     # done (sums of day parts round)
                    f -= left / r
                    acc = 0.0
                    if cycles == 0:
                        first[c, s] = t + 1.0          # 1-based day index
                    s += 1
                    if s == n_st:
                        s = 0
                        cycles += 1
                    if use_cap and s == sens and short[c, t]:
                        stopped = True
                        capped = float(cycles)
                else:
                    acc += f * r
                    f = 0.0
        done = 0.0
        for k in range(s):
            done += share[k]
        if stopped:
            gens[c] = float(cycles) + done
            before[c] = capped
        else:
            gens[c] = float(cycles) + done + share[s] * acc / need[s]
            before[c] = float(cycles)


def stage_walk(dd: np.ndarray, degree_days: np.ndarray, *, start: int = 0,
               short_days: np.ndarray | None = None, sensitive_stage: int = -1,
               shares: np.ndarray | None = None):
    """Walk the generations of one season through the stages, cell by cell.

    Parameters
    ----------
    dd : numpy.ndarray
        Daily progress, shape ``(n_stages, ..., n_days)``: stage ``k``'s
        degree-days (its own thresholds) on every day, or, for a stage with
        its own rate curve, its development per day (fraction of the stage).
    degree_days : numpy.ndarray
        What each stage needs, shape ``(n_stages,)``, all > 0: its degree-days,
        or 1 for a rate-curve stage (rate summation: the stage is complete
        when its summed daily development reaches 1).
    start : int or numpy.ndarray of int
        Index of the biofix day, one for all cells or one per cell (shape
        ``dd.shape[1:-1]``): accumulation starts on it (days before are not
        used); ``n_days`` or more: never (no event, zero generations).
    short_days : numpy.ndarray of bool, optional
        Shape ``(..., n_days)``: days shorter than the critical day length and
        shortening.  None: no photoperiod cap.
    sensitive_stage : int
        Index of the day-length-sensitive stage (with ``short_days``).
    shares : numpy.ndarray, optional
        Share of a generation each stage stands for, in the fractional part
        of ``generations`` (a stage part-done counts its share times the part
        done); shape ``(n_stages,)``, > 0, summing to 1.  Default
        ``degree_days / degree_days.sum()`` (all stages on degree-days).

    Returns
    -------
    first_day : numpy.ndarray
        ``(..., n_stages)``: the 1-based day index (along the days axis, so
        day 1 is ``dd[..., 0]``) on which the first generation completes each
        stage; NaN where it does not (or where entering diapause stopped it).
    generations : numpy.ndarray
        ``(...)``: whole generations plus the fraction of the current one's
        degree-days done (the generation that entered diapause stops there).
    generations_before_diapause : numpy.ndarray
        ``(...)``: whole generations completed before one entered diapause
        (all whole generations where none did).

    A cell with any NaN degree-day from ``start`` on is NaN in every output.
    """
    dd = np.asarray(dd, dtype=np.float64)
    need = np.ascontiguousarray(degree_days, dtype=np.float64)
    if dd.ndim < 2 or need.shape != (dd.shape[0],) or not np.all(need > 0):
        raise ValueError("dd must be (n_stages, ..., n_days) and degree_days (n_stages,) > 0")
    share = need / need.sum() if shares is None else np.ascontiguousarray(shares, dtype=np.float64)
    if share.shape != need.shape or not np.all(share > 0) or abs(share.sum() - 1.0) > 1e-9:
        raise ValueError("shares must be (n_stages,) positive numbers summing to 1")
    shape = dd.shape[1:-1]
    nt = dd.shape[-1]
    flat = np.ascontiguousarray(dd.reshape(dd.shape[0], -1, nt))
    nc = flat.shape[1]
    starts = np.ascontiguousarray(np.broadcast_to(np.asarray(start, dtype=np.int64), shape)
                                  .reshape(nc))
    if np.any(starts < 0):
        raise ValueError("start must not be negative")
    starts = np.minimum(starts, nt)
    if short_days is None:
        short = np.zeros((0, 0), dtype=np.bool_)
        sens = -1
    else:
        short = np.ascontiguousarray(np.broadcast_to(short_days, shape + (nt,)).reshape(nc, nt),
                                     dtype=np.bool_)
        sens = int(sensitive_stage)
        if not 0 <= sens < dd.shape[0]:
            raise ValueError("sensitive_stage must index one of the stages")
    first = np.empty((nc, dd.shape[0]))
    gens = np.empty(nc)
    before = np.empty(nc)
    _walk(flat, need, share, starts, short, sens, first, gens, before)
    return first.reshape(shape + (dd.shape[0],)), gens.reshape(shape), before.reshape(shape)
