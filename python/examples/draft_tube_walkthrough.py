# %% [markdown]
# # A refinement study from Python (demo: invented scenario and numbers)
#
# A model Francis turbine's draft tube, computed on three meshes (and a fourth for the head
# loss). The numbers are invented for this walkthrough; the per-point field is manufactured
# (an exact power law per point plus a few awkward points), so the estimates can be checked
# by eye. Run it as a script (`python examples/draft_tube_walkthrough.py`) or cell by cell in
# an editor that understands `# %%` cells.
#
# Numerical uncertainty is not model-test acceptance: defer to the applicable model-test codes,
# local regulations and licensed engineering judgment before a cavitation margin or a
# guarantee rests on these figures.

# %%
import numpy as np

import meshbound as mb

# Cell counts of the three meshes (3-D): only the ratios of the sizes matter.
cells = np.array([5.2e6, 2.1e6, 8.6e5])
h = (cells[0] / cells) ** (1 / 3)

# %% [markdown]
# ## One quantity: the draft tube's pressure recovery factor

# %%
cp_recovery = [0.7412, 0.7368, 0.7291]
e = mb.three_mesh(h, cp_recovery, formal_order=2.0)
print(f"class {e.convergence}, observed order {e.observed_order:.3f}")
print(f"extrapolated {e.extrapolated:.5f}, U = {e.uncertainty:.5f} ({e.rule})")
for r in e.rules:
    print(f"  {r.title:55s} U = {r.uncertainty!s:>22}  branch {r.branch}")
for w in e.warnings:
    print(f"  warning {w.code}: {w.message}")

# %% [markdown]
# With four meshes: the least-squares estimate (Eca & Hoekstra 2014).

# %%
h4 = np.append(h, h[-1] * 1.3)
head_loss = [1.912, 1.934, 1.968, 2.021]  # m
ls = mb.least_squares(h4, head_loss)
print(f"least squares: order {ls.order}, U(finest) = {ls.uncertainty:.4f} m, class {ls.convergence}")

# Only two meshes for the swirl number: Roache's two-mesh GCI, clearly labelled.
print(mb.two_mesh_gci(h[:2], [0.318, 0.309]))

# %% [markdown]
# ## A field: wall pressure at 300 000 points, one call

# %%
rng = np.random.default_rng(2026)
n = 300_000
p_true = rng.uniform(1.2, 2.6, n)
phi0 = rng.uniform(-0.4, 0.1, n)
a = rng.uniform(-0.05, 0.05, n)
phi = phi0[:, None] + a[:, None] * h[None, :] ** p_true[:, None]
phi[:2000, 1] += 0.01  # a patch where the meshes disagree: oscillating or diverging points
pts = mb.estimate_points(h, phi)
labels, counts = np.unique(pts.convergence, return_counts=True)
print("classes:", {str(k): int(v) for k, v in zip(labels, counts)})
print("largest U:", np.nanmax(pts.uncertainty))
print("points not demonstrating convergence:", pts.count("convergence_not_demonstrated"))

# %% [markdown]
# The summary of the column; it is the same whether made in one pass or merged from parts.

# %%
whole = mb.summarise_points(h, phi, name="wall_cp")
halves = mb.summarise_points(h, phi[: n // 2], name="wall_cp").merge(
    mb.summarise_points(h, phi[n // 2 :], name="wall_cp", offset=n // 2)
)
assert halves == whole
s = whole.to_dict()
print(f"mean order {s['mean_order']:.3f}, median {s['median_order']:.3f}, classes {s['classes']}")

# %% [markdown]
# ## A monitor history: the torque of the finest mesh

# %%
it = np.arange(6000)
torque = 812.0 + 40.0 * np.exp(-it / 400.0) + 0.8 * rng.standard_normal(it.size)
hist = mb.reduce_history(torque, it)
print(f"steady from sample {hist.steady_start}: mean {hist.mean:.3f} N m, "
      f"expanded statistical U {hist.statistical['expanded']:.3f} N m")

# %% [markdown]
# ## A whole study file, as pandas tables (run from the repository's root)

# %%
import pathlib

study = pathlib.Path(__file__).resolve().parents[2] / "studies" / "pump-turbine-pump-mode.yaml"
if study.exists():
    a = mb.assess(study)
    print(a.quantities[["value", "uncertainty", "relative", "convergence", "rule"]])
    print(a.caution)
