"""2. Today and board under 20 concurrent clients, vs the bare JSON endpoint in the same server."""

from __future__ import annotations

from ..generate import Portfolio
from .common import count_items, median, url


def endpoints_under_load(
    *, portfolio: Portfolio, port: int, runs: int, clients: int, per_client: int, max_seconds: float
) -> dict:
    """Each run: the baseline, then today and board twice — first right after a change (every worker
    builds each person's answer once; ``accounts.answers``), then again with the answers kept. The
    targets are judged on the kept pass, the state between changes; the first pass shows what a change
    costs."""
    from accounts.changes import organisation_changed

    from ..load import get_json, load_loop

    today_path = url("scheduling_api:today") + f"?day={portfolio.today.isoformat()}"
    board_path = url("scheduling_api:board") + f"?week={portfolio.today.isoformat()}"
    tech_tokens = [portfolio.main.tokens[t] for t in portfolio.main.technicians]
    sup_token = portfolio.main.tokens[portfolio.main.supervisor]
    # One look at the answers, so the figures are for real content, not errors.
    sample_today = get_json(port, today_path, token=tech_tokens[0])
    sample_board = get_json(port, board_path, token=sup_token)
    targets = {
        "today": (today_path, tech_tokens),
        "board": (board_path, [sup_token]),
        "baseline": ("/bench/baseline/", [None]),
    }
    for path, tokens in targets.values():  # warm every worker (imports, connections, kept answers)
        load_loop(port=port, path=path, tokens=tokens, clients=clients, per_client=5, max_seconds=10)
    passes = {"baseline": "baseline", "today_after_change": "today", "today": "today"}
    passes |= {"board_after_change": "board", "board": "board"}
    results: dict[str, list] = {k: [] for k in passes}
    for _ in range(runs):
        for name, target in passes.items():
            if name.endswith("_after_change"):
                # as a service's write does: every kept answer of the organisation is stale
                organisation_changed(organisation_id=portfolio.main.organisation_id)
            path, tokens = targets[target]
            results[name].append(
                load_loop(
                    port=port, path=path, tokens=tokens, clients=clients, per_client=per_client, max_seconds=max_seconds
                )
            )
    out: dict = {
        "clients": clients,
        "requests_per_client": per_client,
        "today_visits_sample": count_items(sample_today),
        "board_sample": count_items(sample_board),
    }
    base_rps = median([r.throughput_rps for r in results["baseline"]])
    for name, rs in results.items():
        out[name] = {
            "throughput_rps": median([r.throughput_rps for r in rs]),
            "p50_ms": median([r.p50_ms for r in rs]),
            "p95_ms": median([r.p95_ms for r in rs]),
            "requests": sum(r.requests for r in rs),
            "errors": sum(r.errors for r in rs),
            "first_error": next((r.first_error for r in rs if r.first_error), ""),
        }
        if name != "baseline":
            rps = out[name]["throughput_rps"]
            out[name]["throughput_over_baseline"] = round(rps / base_rps, 3) if rps is not None and base_rps else None
    return out
