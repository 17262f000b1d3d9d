"""Read a forkmap run directory with DuckDB and pyarrow, as a meta-analyst would, and check
the output contract. Usage: python tests/python/check_run.py RUN_DIR CONFIG_SPECS

Prints one line per check and a closing 'N passed, N failed' line; exits non-zero on any
failure.
"""

import json
import os
import sys

# The columns this script reads, by table (RUN_DIR/TABLE/*.parquet or RUN_DIR/TABLE.parquet):
# the meta-analyst's own list, kept here apart from the engine. `--names` prints it as JSON
# (a Rust test, tests/contract.rs, compares it with engine/src/base/schema.rs); a run checked
# below must hold every column listed for each table it has.
CONTRACT = {
    "specs": ["spec_id", "transform", "fill", "pool", "scale", "compress", "model", "weighting",
              "status", "notes", "mae", "rmse", "r2", "baseline_mae", "skill", "top_quartile_mae",
              "unit_mae", "spearman", "seconds"],
    "predictions": ["spec_id", "unit", "wave", "observed", "predicted", "fold", "repeat"],
    "loadings": ["spec_id", "component", "indicator", "loading"],
    "importance": ["spec_id", "indicator", "level", "kind", "importance", "spread", "rank", "in_pool"],
    "report/nested_summary": ["naive_error", "naive_all_error", "nested_error", "optimism"],
    "curves/breakpoints": ["spec_id", "indicator", "shape", "breakpoint", "composition_draws",
                           "direction", "same_as"],
    "curves/signs": ["indicator", "members", "holding", "distinct", "rises", "falls", "flat", "turns"],
    "refit/fits": ["resample", "seed", "units", "rows", "spec_id", "run_rank", "run_error", "metric",
                   "error", "status", "message", "best", "good"],
    "refit/tops": ["resample", "level", "kind", "name", "good_holding", "good_top", "best_holds",
                   "top_in_best"],
    "report/refit_stability": ["level", "kind", "name", "resamples", "mean_share_top_k"],
}
if sys.argv[1:] == ["--names"]:
    print(json.dumps(CONTRACT, indent=1))
    sys.exit(0)

import duckdb
import pyarrow.dataset as ds
import pyarrow.parquet as pq

run = sys.argv[1]
passed, failed = 0, 0


def check(name, cond, detail=""):
    global passed, failed
    if cond:
        passed += 1
        print(f"ok    {name}")
    else:
        failed += 1
        print(f"FAIL  {name} {detail}")


manifest = json.load(open(os.path.join(run, "manifest.json")))
n_specs = manifest["specs"]
rows = manifest["rows"] * manifest["folds"]["repeats"]

w = manifest.get("work", {})
check("manifest: work accounted (stage, fit, importance seconds; other share in [0, 1))",
      w.get("fit_seconds", 0) > 0 and w.get("stage_seconds", 0) > 0
      and 0 <= w.get("other_share", -1) < 1, f"{w}")

specs_glob = os.path.join(run, "specs", "*.parquet")
preds_glob = os.path.join(run, "predictions", "*.parquet")

# DuckDB
con = duckdb.connect()
n = con.execute(f"select count(*) from '{specs_glob}'").fetchone()[0]
check("duckdb: one spec row per spec", n == n_specs, f"{n} vs {n_specs}")
u = con.execute(f"select count(distinct spec_id) from '{specs_glob}'").fetchone()[0]
check("duckdb: spec ids unique", u == n_specs)
bad = con.execute(f"select count(*) from '{specs_glob}' where status <> 'ok'").fetchone()[0]
check("duckdb: all statuses ok", bad == 0, f"{bad} not ok")
best = con.execute(f"select max(skill) from '{specs_glob}'").fetchone()[0]
check("duckdb: best skill > 0", best is not None and best > 0, f"best {best}")
np_ = con.execute(f"select count(*) from '{preds_glob}'").fetchone()[0]
check("duckdb: predictions = specs x rows x repeats", np_ == n_specs * rows, f"{np_}")
# MAE recomputed from the predictions table equals the specs table's MAE.
diff = con.execute(
    f"""select max(abs(s.mae - p.mae)) from '{specs_glob}' s join
        (select spec_id, avg(abs(observed - predicted)) mae from '{preds_glob}' group by 1) p
        using (spec_id)"""
).fetchone()[0]
check("duckdb: specs.mae = mean |observed - predicted|", diff is not None and diff < 1e-9, f"{diff}")
top = con.execute(f"select model, max(skill) from '{specs_glob}' group by 1 order by 2 desc").fetchall()
check("duckdb: group by model", len(top) >= 2)

# Undefined metrics are null, never NaN (NaN sorts first in DuckDB's descending order).
nan = con.execute(
    f"""select count(*) from '{specs_glob}' where isnan(mae) or isnan(rmse) or isnan(r2)
        or isnan(baseline_mae) or isnan(skill) or isnan(top_quartile_mae) or isnan(unit_mae)
        or isnan(spearman)"""
).fetchone()[0]
check("duckdb: no NaN metric (undefined ones are null)", nan == 0, f"{nan} rows")
notes = con.execute(f"select count(*) from '{specs_glob}' where notes is not null").fetchone()[0]
check("duckdb: specs with notes = manifest specs_with_notes",
      notes == manifest.get("specs_with_notes", -1), f"{notes} vs {manifest.get('specs_with_notes')}")

# pyarrow
t = ds.dataset(os.path.join(run, "specs"), format="parquet").to_table()
check("pyarrow: specs rows", t.num_rows == n_specs)
for c in ["spec_id", "transform", "fill", "pool", "scale", "compress", "model", "weighting", "status", "notes", "mae", "rmse", "r2", "baseline_mae", "skill", "top_quartile_mae", "unit_mae", "spearman", "seconds"]:
    check(f"pyarrow: specs column {c}", c in t.column_names)
p = ds.dataset(os.path.join(run, "predictions"), format="parquet").to_table()
check("pyarrow: predictions rows", p.num_rows == n_specs * rows)
for c in ["spec_id", "unit", "wave", "observed", "predicted", "fold", "repeat"]:
    check(f"pyarrow: predictions column {c}", c in p.column_names)

# Loadings: one block per compressed spec, none for uncompressed ones.
loadings_glob = os.path.join(run, "loadings", "*.parquet")
lc = con.execute(
    f"""select count(distinct l.spec_id), count(distinct s.spec_id) filter (where s.compress <> 'none')
        from '{specs_glob}' s left join '{loadings_glob}' l using (spec_id)"""
).fetchone()
check("duckdb: loadings for every compressed spec", lc[0] == lc[1] and lc[0] > 0, f"{lc}")
bad = con.execute(
    f"""select count(*) from '{loadings_glob}' l join '{specs_glob}' s using (spec_id)
        where s.compress = 'none'"""
).fetchone()[0]
check("duckdb: no loadings for uncompressed specs", bad == 0)
l = ds.dataset(os.path.join(run, "loadings"), format="parquet").to_table()
check("pyarrow: loadings columns", l.column_names == ["spec_id", "component", "indicator", "loading"], f"{l.column_names}")

# Importances: every ok spec has permutation rows for every indicator; ranks are
# competition ranks of the value (1 + the number of larger importances: ties share a rank),
# as SQL's rank() gives them.
imp_glob = os.path.join(run, "importance", "*.parquet")
n_ind = manifest["indicators"]
bad = con.execute(
    f"""select count(*) from (select spec_id, count(*) c, min(rank) lo, max(rank) hi
        from '{imp_glob}' where level = 'indicator' and kind = 'permutation' group by 1)
        where c <> {n_ind} or lo <> 1 or hi > {n_ind}"""
).fetchone()[0]
check("duckdb: permutation importance per indicator, ranks within 1..n", bad == 0, f"{bad} specs off")
bad = con.execute(
    f"""select count(*) from (select rank, rank() over (partition by spec_id, level, kind
        order by importance desc) as sql_rank from '{imp_glob}') where rank <> sql_rank"""
).fetchone()[0]
check("duckdb: ranks are SQL's rank() of the importance (ties share a rank)", bad == 0, f"{bad} rows off")
cov = con.execute(f"select count(distinct spec_id) from '{imp_glob}'").fetchone()[0]
check("duckdb: importances for every spec", cov == n_specs, f"{cov}")
oop = con.execute(f"select count(*) from '{imp_glob}' where not in_pool and importance <> 0").fetchone()[0]
check("duckdb: out-of-pool indicators have importance 0", oop == 0)
it = ds.dataset(os.path.join(run, "importance"), format="parquet").to_table()
check("pyarrow: importance columns", it.column_names == ["spec_id", "indicator", "level", "kind", "importance", "spread", "rank", "in_pool"], f"{it.column_names}")

# The nested estimate's naive best is the best, in the run's own folds, of the same specs
# the outer folds chose among (settings.json), so its optimism is the selection's alone.
nested_settings = os.path.join(run, "nested", "settings.json")
summary = os.path.join(run, "report", "nested_summary.parquet")
if os.path.exists(nested_settings) and os.path.exists(summary):
    ids = json.load(open(nested_settings))["spec_ids"]
    specs_glob = os.path.join(run, "specs", "*.parquet")
    want = con.execute(
        f"select min(mae) from '{specs_glob}' where status = 'ok' and spec_id in ({','.join(repr(i) for i in ids)})"
    ).fetchone()[0]
    got = pq.read_table(summary).to_pylist()[0]
    # the report sums per-unit errors in its own order: equal to the specs table's to 1e-12
    check("duckdb: nested naive best over the swept specs", abs(got["naive_error"] - want) <= 1e-12 * want, f"{got['naive_error']} vs {want}")
    best_all = con.execute(f"select min(mae) from '{specs_glob}' where status = 'ok'").fetchone()[0]
    check("duckdb: nested naive_all_error is the best of all specs", abs(got["naive_all_error"] - best_all) <= 1e-12 * best_all, f"{got['naive_all_error']} vs {best_all}")
    check("nested optimism = nested - naive", abs(got["optimism"] - (got["nested_error"] - got["naive_error"])) < 1e-12)

# The curves (RUN_DIR/curves/): a breakpoint (null otherwise) only for a hinge or jump; absent members are
# exactly the specs whose importance rows say the indicator is out of their pool; the
# signs' counts and shares are over the distinct curves of the holding members.
bp_path = os.path.join(run, "curves", "breakpoints.parquet")
if os.path.exists(bp_path):
    bad = con.execute(
        f"""select count(*) from '{bp_path}' where (shape in ('hinge', 'jump')) = (breakpoint is null)
            or (shape in ('hinge', 'jump')) <> (composition_draws > 0)
            or (shape = 'absent') <> (direction = 'absent')"""
    ).fetchone()[0]
    check("duckdb: curves breakpoints only for a hinge or jump; absent shape iff absent direction", bad == 0, f"{bad} rows")
    imp_path = os.path.join(run, "importance", "*.parquet")
    mism = con.execute(
        f"""select count(*) from '{bp_path}' b join
            (select distinct spec_id, indicator, in_pool from '{imp_path}' where level = 'indicator') i
            using (spec_id, indicator) where (b.direction = 'absent') = i.in_pool"""
    ).fetchone()[0]
    check("duckdb: curves absent iff the importance table has the indicator out of the pool", mism == 0, f"{mism} rows")
    sg_path = os.path.join(run, "curves", "signs.parquet")
    got = con.execute(
        f"""select count(*) from '{sg_path}' s join
            (select indicator, count(*) as members, count(*) filter (where direction <> 'absent') as holding,
                    count(*) filter (where direction <> 'absent' and same_as is null) as distinct_,
                    count(*) filter (where direction = 'rises' and same_as is null) as rises
             from '{bp_path}' group by indicator) b using (indicator)
            where s.members <> b.members or s.holding <> b.holding or s."distinct" <> b.distinct_
               or abs(s.rises - b.rises / greatest(b.distinct_, 1)) > 1e-12
               or (s."distinct" > 0 and abs(s.rises + s.falls + s.flat + s.turns - 1) > 1e-12)"""
    ).fetchone()[0]
    check("duckdb: curves signs count the distinct curves of the holding members", got == 0, f"{got} indicators")

# Every table the run holds has the columns this script reads.
for table, cols in CONTRACT.items():
    folder = os.path.join(run, table)
    if os.path.isdir(folder):
        names = ds.dataset(folder, format="parquet").schema.names
    elif os.path.exists(folder + ".parquet"):
        names = pq.read_schema(folder + ".parquet").names
    else:
        continue
    missing = [c for c in cols if c not in names]
    check(f"pyarrow: {table} has the contract's columns", not missing, f"missing {missing}")

# The refit of the top N specs on unit subsamples (RUN_DIR/refit/): the columns as
# engine/src/base/schema.rs names them; the refitted specs are the run's top N by the report's
# metric (ties by spec id); per subsample one best, the best is good, the good flags follow
# the stated rule; tops counts are consistent; the report's refit shares are the tops'.
refit_manifest = os.path.join(run, "refit", "manifest.json")
if os.path.exists(refit_manifest):
    import re
    rm = json.load(open(refit_manifest))
    ident = rm["identity"]
    fits_glob = os.path.join(run, "refit", "fits", "*.parquet")
    tops_glob = os.path.join(run, "refit", "tops", "*.parquet")
    fc = ds.dataset(os.path.join(run, "refit", "fits"), format="parquet").to_table().column_names
    check("pyarrow: refit fits columns", fc == ["resample", "seed", "units", "rows", "spec_id", "run_rank", "run_error",
          "metric", "error", "status", "message", "best", "good"], f"{fc}")
    tc = ds.dataset(os.path.join(run, "refit", "tops"), format="parquet").to_table().column_names
    check("pyarrow: refit tops columns", tc == ["resample", "level", "kind", "name", "good_holding", "good_top",
          "best_holds", "top_in_best"], f"{tc}")
    b = con.execute(f"select count(distinct resample) from '{fits_glob}'").fetchone()[0]
    check("duckdb: refit subsamples = manifest resamples", b == rm["resamples"] and rm["status"] == "complete", f"{b}")
    metric = ident["metric"]
    top = con.execute(
        f"""select spec_id, {metric} from '{specs_glob}' where status = 'ok' and {metric} is not null
            order by {metric}, spec_id limit {ident["specs"]}"""
    ).fetchall()
    got = con.execute(f"select spec_id, run_error from '{fits_glob}' where resample = 0 order by run_rank").fetchall()
    check("duckdb: refit specs are the run's top N by the metric (ties by id)",
          [t[0] for t in top] == [g[0] for g in got] and all(abs(t[1] - g[1]) < 1e-12 for t, g in zip(top, got)), f"{got}")
    bad = con.execute(
        f"""select count(*) from (select resample, count(*) n, count(*) filter (where best) nb,
            count(*) filter (where best and not good) bg, min(units) lo, max(units) hi
            from '{fits_glob}' group by 1)
            where n <> {ident["specs"]} or nb <> 1 or bg <> 0 or lo <> {rm["units_kept"]} or hi <> {rm["units_kept"]}"""
    ).fetchone()[0]
    check("duckdb: refit: N rows, one best (good), the kept units in every subsample", bad == 0, f"{bad} subsamples")
    bad = con.execute(
        f"""select count(*) from '{fits_glob}' f join (select resample, min(error) e from '{fits_glob}' group by 1) m
            using (resample) where f.best and f.error <> m.e"""
    ).fetchone()[0]
    check("duckdb: refit best has the subsample's lowest error", bad == 0, f"{bad}")
    ratio = re.search(r"<= \(1 \+ ([0-9.eE+-]+)\) x best", rm["good_rule"])
    margin = re.search(r"<= best \+ ([0-9.eE+-]+)$", rm["good_rule"])
    cut = f"m.e * (1 + {ratio.group(1)})" if ratio else f"m.e + {margin.group(1)}"
    bad = con.execute(
        f"""select count(*) from '{fits_glob}' f join (select resample, min(error) e from '{fits_glob}' group by 1) m
            using (resample) where f.good <> coalesce(f.error <= {cut}, false)"""
    ).fetchone()[0]
    check(f"duckdb: refit good flags follow the rule ({rm['good_rule']})", bad == 0, f"{bad} rows")
    bad = con.execute(
        f"""select count(*) from '{tops_glob}' t join (select resample, count(*) filter (where good) g
            from '{fits_glob}' group by 1) f using (resample)
            where t.good_top < 0 or t.good_top > t.good_holding or t.good_holding > f.g or t.good_holding < 1
               or (t.top_in_best and not t.best_holds)"""
    ).fetchone()[0]
    check("duckdb: refit tops counts consistent", bad == 0, f"{bad} rows")
    rs = os.path.join(run, "report", "refit_stability.parquet")
    if os.path.exists(rs):
        bad = con.execute(
            f"""with held as (select level, kind, count(distinct resample) n from '{tops_glob}' group by 1, 2),
                shares as (select level, kind, name, sum(good_top::double / good_holding) s from '{tops_glob}' group by 1, 2, 3)
                select count(*) from '{rs}' r join shares using (level, kind, name) join held using (level, kind)
                where abs(r.mean_share_top_k - shares.s / held.n) > 1e-12 or r.resamples <> held.n"""
        ).fetchone()[0]
        n_rs = con.execute(f"select count(*) from '{rs}'").fetchone()[0]
        check("duckdb: report refit_stability mean shares from refit/tops", bad == 0 and n_rs > 0, f"{bad} of {n_rs}")

    rsp = os.path.join(run, "report", "refit_specs.parquet")
    if os.path.exists(rsp):
        # A spec marked as the same fit as another has bit-equal run metrics and predictions.
        bad, twins = con.execute(
            f"""with t as (select spec_id, same_fit_as from '{rsp}' where same_fit_as is not null),
                p as (select spec_id, unit, wave, fold, repeat, predicted from '{preds_glob}')
                select count(*) filter (where a.predicted is distinct from b.predicted), count(distinct t.spec_id)
                from t join p a on a.spec_id = t.spec_id
                left join p b on b.spec_id = t.same_fit_as and b.unit = a.unit
                     and b.wave is not distinct from a.wave and b.repeat = a.repeat"""
        ).fetchone()
        check("duckdb: refit_specs same_fit_as names a spec with the same predictions", bad == 0, f"{bad} rows differ over {twins} twins")

# The null's goodranks (RUN_DIR/null/goodranks/): one file per complete draw; every spec
# in it is within ranks_within of the draw's best and the draw's best is there; ranks are
# SQL's rank(); the report's null_claims p follows its formula, and each "in the top k"
# claim's null mean (over the draws whose good set holds the kind) is recomputed here from
# goodranks with the report's ratio rule.
gr_dir = os.path.join(run, "null", "goodranks")
if os.path.isdir(gr_dir):
    import re

    nman = json.load(open(os.path.join(run, "null", "manifest.json")))
    within = nman["identity"]["ranks_within"]
    draws_dir = os.path.join(run, "null", "draws")
    names = lambda d: sorted(f for f in os.listdir(d) if f.startswith("draw-"))
    check("null: a goodranks file for every complete draw", names(gr_dir) == names(draws_dir), f"{len(names(gr_dir))} vs {len(names(draws_dir))}")
    gr_glob = os.path.join(gr_dir, "*.parquet")
    dr_glob = os.path.join(draws_dir, "*.parquet")
    cols = pq.read_schema(os.path.join(gr_dir, names(gr_dir)[0])).names
    check("null: goodranks columns", cols == ["draw", "spec_id", "error", "level", "kind", "name", "importance", "rank", "in_pool"], f"{cols}")
    far = con.execute(
        f"""select count(*) from '{gr_glob}' g join '{dr_glob}' d using (draw)
            where g.error > d.best_error * (1 + {within})"""
    ).fetchone()[0]
    check("duckdb: goodranks hold only specs within ranks_within of the draw's best", far == 0, f"{far} rows")
    off = con.execute(
        f"""select count(*) from (select draw, min(error) lo from '{gr_glob}' group by 1) g
            join '{dr_glob}' d using (draw) where g.lo <> d.best_error"""
    ).fetchone()[0]
    check("duckdb: each draw's best spec is in its goodranks", off == 0, f"{off} draws")
    bad = con.execute(
        f"""select count(*) from (select rank, rank() over (partition by draw, spec_id, level, kind
            order by importance desc) as sql_rank from '{gr_glob}') where rank <> sql_rank"""
    ).fetchone()[0]
    check("duckdb: goodranks ranks are SQL's rank() of the importance", bad == 0, f"{bad} rows off")
    nc_path = os.path.join(run, "report", "null_claims.parquet")
    rep = json.load(open(os.path.join(run, "report", "report.json")))
    if os.path.exists(nc_path):
        nc = pq.read_table(nc_path).to_pylist()
        tested = [c for c in nc if c["not_tested"] == ""]
        badp = [c["statement"] for c in tested if abs(c["p_unadjusted"] - (1 + c["draws_at_least"]) / (1 + c["draws"])) > 1e-15]
        check("null_claims: p_unadjusted = (1 + draws at least) / (1 + draws)", not badp, f"{badp}")
        untested_ok = all(c["p_unadjusted"] is None and c["p_adjusted"] is None and c["observed"] is None for c in nc if c["not_tested"] != "")
        check("null_claims: untested claims carry a reason and no numbers", untested_ok)
        # The max-type null of the automatic conclusions: adjusted p by its formula, never
        # below the unadjusted p; listed claims carry neither a family nor an adjusted p.
        auto = [c for c in tested if c["source"] == "auto"]
        bada = [c["statement"] for c in auto if c["family"] is None or abs(c["p_adjusted"] - (1 + c["family_draws_at_least"]) / (1 + c["draws"])) > 1e-15]
        check("null_claims: p_adjusted = (1 + family draws at least) / (1 + draws) for automatic conclusions", not bada, f"{bada}")
        below = [c["statement"] for c in auto if c["p_adjusted"] < c["p_unadjusted"] or c["family_draws_at_least"] < c["draws_at_least"]]
        check("null_claims: p_adjusted >= p_unadjusted", not below, f"{below}")
        listed_ok = all(c["p_adjusted"] is None and c["family"] is None for c in nc if c["source"] != "auto")
        check("null_claims: listed claims have no family and no adjusted p", listed_ok)
        print(f"      ({len(auto)} automatic conclusions adjusted; {sum(c['p_adjusted'] <= 0.05 for c in auto)} with p_adjusted <= 0.05, {sum(c['p_unadjusted'] <= 0.05 for c in auto)} with p_unadjusted <= 0.05)")
        pat = re.compile(r"^(indicator|group) (\S+) is in the top (\d+) \((\S+) importance\)$")
        seen = 0
        for c in tested:
            m = pat.match(c["statement"])
            if not m or rep["good"] != "ratio":
                continue
            level, name, k, kind = m.group(1), m.group(2), int(m.group(3)), m.group(4)
            eps = rep["ratio_eps"]
            got = con.execute(
                f"""with good as (select distinct g.draw, g.spec_id from '{gr_glob}' g join '{dr_glob}' d using (draw)
                        where g.error <= d.best_error * (1 + {eps}) and g.level = '{level}' and g.kind = '{kind}'),
                    per as (select good.draw, avg(case when g.rank <= {k} and g.importance > 0 and g.in_pool then 1.0 else 0.0 end) s
                        from good left join '{gr_glob}' g on g.draw = good.draw and g.spec_id = good.spec_id
                        and g.level = '{level}' and g.kind = '{kind}' and g.name = '{name}' group by 1)
                    select avg(s), count(*) from per"""
            ).fetchone()
            check(f"duckdb: null mean support of '{c['statement']}' from goodranks", got[1] == c["draws"] - c["draws_unknown"] and abs(got[0] - c["null_mean"]) < 1e-12, f"{got} vs {c['null_mean']}")
            seen += 1
            # The "in the top k" family's maximum: the selection picks every name top k in
            # at least half of the draw's good set, so for an observed support >= 1/2 a draw
            # is at or above it iff some name's share there is; draws whose good set holds
            # no spec of the kind are unknown and count as at or above.
            if c["source"] == "auto" and c["observed"] >= 0.5:
                mx = con.execute(
                    f"""with good as (select g.* from '{gr_glob}' g join '{dr_glob}' d using (draw)
                            where g.error <= d.best_error * (1 + {eps}) and g.level = '{level}' and g.kind = '{kind}'),
                        per as (select draw, name, avg(case when rank <= {k} and importance > 0 and in_pool then 1.0 else 0.0 end) s
                            from good group by 1, 2),
                        mx as (select draw, max(s) m from per group by 1)
                        select count(*) filter (where m >= ?::double), count(*) from mx""",
                    [c["observed"]],
                ).fetchone()
                want = mx[0] + (c["draws"] - mx[1])
                check(f"duckdb: family maximum of '{c['statement']}' from goodranks", want == c["family_draws_at_least"], f"{want} vs {c['family_draws_at_least']}")
        print(f"      ({seen} 'in the top k' claims recomputed from goodranks; {len(tested)} of {len(nc)} claims tested)")

print(f"{passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
