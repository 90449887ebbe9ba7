"""The text `layercalc new` writes: one commented sheet that uses every construct of the
`.layers` format, ready to edit. A test loads it, so it always stays valid."""

from __future__ import annotations

TEMPLATE = '''\
# A layercalc sheet: one atmospheric column described by layers.
# Edit the numbers, then:   layercalc check THIS_FILE   and   layercalc run THIS_FILE
# '#' starts a comment; blank lines are free; one statement per line.

title "Your station, date and time"
note "Where the numbers came from (radiosonde, analysis, forecast model, exercise)."
note "Add as many notes as you like; they are printed under the title."

# ---- options (pick one word each) -----------------------------------------------
# integrate: from_top (omega_top given, default) or from_surface (omega_surface given)
# adjust:    none, uniform or obrien (only with integrate = from_surface): removes the
#            mismatch between the integrated and the given omega at the column top
option integrate = from_surface
option adjust = obrien

# ---- cells: single values with a unit -------------------------------------------
cell surface_height = 120 m                  # station elevation; heights start here
cell omega_surface [hPa/h] = 0 [hPa/h]       # boundary value for integrate = from_surface
cell omega_top [hPa/h] = 0 [hPa/h]           # what the column top should reach
cell kappa = 0.286                           # Rd/cp for dry air, for theta below

# ---- the layers table -----------------------------------------------------------
# One row per layer, in either order (top first or surface first); a unit in brackets
# after each name. T and Td are layer means; div is the layer-mean horizontal
# divergence in units of 1e-5 s^-1 (negative = convergence).
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  Td [degC]  div [1e-5 s^-1]
     1000          850          14.0       9.0       -1.2
      850          700           4.5      -1.0       -0.6
      700          500          -8.0     -16.0        0.2
      500          300         -30.0     -42.0        0.9
      300          200         -50.0     -60.0        0.5
end

# ---- your own columns: one value per layer --------------------------------------
# Arithmetic works row by row; units are checked (you cannot add hPa to K).
# Functions: ln exp sqrt abs min max where(condition, a, b); across layers:
# sum mean min max lowest_layer highest_layer at_min at_max; running sums:
# upward_sum downward_sum; neighbours: above(x, edge) below(x, edge).
column z_mid [m] = (z_bottom + z_top) / 2
column theta [K] = T * (1000 [hPa] / p_mid) ^ kappa
column lapse_rate [K/km] = (below(T, T) - T) / (z_mid - below(z_mid, surface_height))
column stable = where(lapse_rate < 6.5 [K/km], 1, 0)

# ---- your own cells: one value for the column -----------------------------------
cell mean_theta [K] = sum(theta * dp) / sum(dp)
cell warmest_layer_top [hPa] = at_max(T, p_top)
cell stable_layers = sum(stable)
cell depth_in_dam [dam] = column_thickness

# ---- a what-if scenario: changes to the inputs above ----------------------------
# add / scale / set an input column, on all layers or on a selection:
#   between P1 and P2, above P, below P, or where CONDITION
# A scenario may also set a cell or an option, and may build on another one
# ("scenario NAME from OTHER").
scenario warmer_aloft "3 K warmer between 500 and 300 hPa, more divergence above"
  add 3 K to T between 500 hPa and 300 hPa
  scale div by 1.5 above 500 hPa
end
'''
