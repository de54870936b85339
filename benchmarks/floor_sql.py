"""The floors' hand-written SQL, shared by the in-process figures and the whole-process
floors (``cold_floor``), which import nothing but the standard library, this module and, on
PostgreSQL, psycopg. Every statement runs unchanged on SQLite and PostgreSQL."""

# One hand-written statement computing what reconcile reports per specimen: drilled mass and
# its variance, dissolved, on hand, returned, and how many powders and solutions fail to
# close. Closure as in tracker.services.read.reconcile: a gap counts when gap² exceeds both
# (k·u)² with k = 2 and the balances' rounding bound², with 1e-9 relative slack for float
# noise; √6 = 2.449489742783178 scales a sum of standard uncertainties to a rounding bound.
RECONCILE_SQL = """
WITH taken AS (
  SELECT solution_id, SUM(mass_g) AS mass, SUM(mass_u_g * mass_u_g) AS var,
         SUM(mass_u_g) AS u_sum
  FROM aliquot GROUP BY solution_id),
sol AS (
  SELECT so.powder_id, so.status, so.residual_g,
         so.solution_mass_g - COALESCE(t.mass, 0) - COALESCE(so.residual_g, 0) AS gap,
         so.solution_mass_u_g * so.solution_mass_u_g + COALESCE(t.var, 0)
           + COALESCE(so.residual_u_g * so.residual_u_g, 0) AS var,
         2.449489742783178 * (so.solution_mass_u_g + COALESCE(t.u_sum, 0)
           + COALESCE(so.residual_u_g, 0)) AS bound,
         so.powder_mass_mg, so.powder_mass_u_mg
  FROM solution so LEFT JOIN taken t ON t.solution_id = so.id),
books AS (
  SELECT powder_id, SUM(powder_mass_mg) AS dissolved,
         SUM(powder_mass_u_mg * powder_mass_u_mg) AS var, SUM(powder_mass_u_mg) AS u_sum,
         SUM(CASE WHEN status <> 'available' AND gap * gap > 4 * var * (1 + 1e-9) + 1e-18
             AND gap * gap > bound * bound * (1 + 1e-9) + 1e-18 THEN 1 ELSE 0 END) AS gaps
  FROM sol GROUP BY powder_id),
pw AS (
  SELECT p.specimen_id, p.status, p.mass_mg, p.mass_u_mg, p.residual_mg, p.override_reason,
         COALESCE(b.dissolved, 0) AS dissolved, COALESCE(b.gaps, 0) AS gaps,
         p.mass_mg - COALESCE(b.dissolved, 0) - COALESCE(p.residual_mg, 0) AS gap,
         p.mass_u_mg * p.mass_u_mg + COALESCE(b.var, 0)
           + COALESCE(p.residual_u_mg * p.residual_u_mg, 0) AS var,
         p.readability_mg + 2.449489742783178 * COALESCE(b.u_sum, 0)
           + 2.449489742783178 * COALESCE(p.residual_u_mg, 0) AS bound
  FROM powder p LEFT JOIN books b ON b.powder_id = p.id),
per_specimen AS (
  SELECT specimen_id, COUNT(*) AS powders, SUM(mass_mg) AS drilled,
         SUM(mass_u_mg * mass_u_mg) AS variance, SUM(dissolved) AS dissolved,
         SUM(CASE WHEN status = 'available' THEN mass_mg - dissolved ELSE 0 END) AS on_hand,
         SUM(CASE WHEN status = 'returned' THEN COALESCE(residual_mg, gap) ELSE 0 END)
           AS returned,
         SUM(gaps + CASE WHEN status <> 'available'
             AND gap * gap > 4 * var * (1 + 1e-9) + 1e-18
             AND gap * gap > bound * bound * (1 + 1e-9) + 1e-18 THEN 1 ELSE 0 END) AS open_books,
         SUM(CASE WHEN override_reason IS NOT NULL THEN 1 ELSE 0 END) AS overrides
  FROM pw GROUP BY specimen_id)
SELECT s.loan_id, s.id, s.catalog_number, s.status, l.reference,
       COALESCE(ps.powders, 0), COALESCE(ps.drilled, 0), COALESCE(ps.variance, 0),
       COALESCE(ps.dissolved, 0), COALESCE(ps.on_hand, 0), COALESCE(ps.returned, 0),
       COALESCE(ps.open_books, 0), COALESCE(ps.overrides, 0)
FROM specimen s JOIN loan l ON l.id = s.loan_id
LEFT JOIN per_specimen ps ON ps.specimen_id = s.id
ORDER BY s.loan_id, s.id
"""


LINEAGE_FLOOR = [
    "SELECT * FROM specimen WHERE id = ?",
    "SELECT * FROM powder WHERE specimen_id = ?",
    "SELECT so.* FROM solution so JOIN powder p ON p.id = so.powder_id WHERE p.specimen_id = ?",
    "SELECT c.* FROM concentration c JOIN solution so ON so.id = c.solution_id "
    "JOIN powder p ON p.id = so.powder_id WHERE p.specimen_id = ?",
    "SELECT a.* FROM aliquot a JOIN solution so ON so.id = a.solution_id "
    "JOIN powder p ON p.id = so.powder_id WHERE p.specimen_id = ?",
    "SELECT bp.*, c.* FROM batch_position bp JOIN cut c ON c.position_id = bp.id "
    "JOIN aliquot a ON a.id = bp.aliquot_id JOIN solution so ON so.id = a.solution_id "
    "JOIN powder p ON p.id = so.powder_id WHERE p.specimen_id = ?",
]
