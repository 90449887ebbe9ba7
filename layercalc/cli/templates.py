"""The text `layercalc new` writes: one commented sheet that uses every construct of the
`.layers` format (levels, stations, and a layers table as the commented alternative),
ready to edit. Tests load and evaluate it, and the alternative, so both stay valid."""

from __future__ import annotations

TEMPLATE = '''\
# A layercalc sheet: one atmospheric column, built here from a sounding and the winds at
# three stations around it. Edit the numbers, then:
#     layercalc check THIS_FILE   and   layercalc run THIS_FILE
# '#' starts a comment; blank lines are free; one statement per line.
# (Everything below is made up: Northfield, Eastmoor and Southvale are no real stations.)

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

# ---- the sounding: a levels table ------------------------------------------------
# One row per pressure level, in any order. Consecutive levels become layers (every
# value linear in ln p between them). '-' marks a missing value (interpolated, with a
# warning). With z, each layer's reported thickness is checked hydrostatically.
levels
  p [hPa]  T [degC]  Td [degC]  z [m]
  1000      14.0       9.0       120
   850       6.0       1.0      1472
   700      -3.0     -10.0      3036
   500     -19.0     -30.0      5621
   300     -44.0     -55.0      9235
   200     -56.0     -68.0     11883
end

# ---- the divergence: winds at three or more stations around the column -----------
# Each station gives its position and a levels table; at each level a linear wind field
# is fitted to the stations' winds, and its divergence becomes the layers' div.
# dir is where the wind blows from (degrees from north); or give u and v [m/s].
station "Northfield" latitude 47.9 longitude 8.6
  levels
    p [hPa]  dir [deg]  speed [kt]
    1000       235          7
     850       238         19
     700       247         26
     500       257         39
     300       262         59
     200       264         52
  end
end
station "Eastmoor" latitude 46.6 longitude 10.9
  levels
    p [hPa]  dir [deg]  speed [kt]
    1000       218         11
     850       231         25
     700       240         35
     500       251         47
     300       260         65
     200       261         56
  end
end
station "Southvale" latitude 45.9 longitude 7.7
  levels
    p [hPa]  dir [deg]  speed [kt]
    1000       246         12
     850       248         25
     700       257         34
     500       264         46
     300       267         64
     200       267         56
  end
end

# ---- or: a layers table instead of the levels and stations above -----------------
# When you have layer means rather than a sounding, delete the levels table and the
# stations and write one row per layer, in either order, a unit in brackets after each
# name. T and Td are layer means; div is the layer-mean horizontal divergence in units
# of 1e-5 s^-1 (negative = convergence). Remove the '# ' in front of each line:
# layers
#   p_bottom [hPa]  p_top [hPa]  T [degC]  Td [degC]  div [1e-5 s^-1]
#      1000          850          10.0       5.0       -1.2
#       850          700           1.5      -4.5       -0.6
#       700          500         -11.0     -20.0        0.2
#       500          300         -31.5     -42.5        0.9
#       300          200         -50.0     -61.5        0.5
# end

# ---- your own columns: one value per layer --------------------------------------
# Arithmetic works row by row; units are checked (you cannot add hPa to K).
# Functions: ln exp sqrt abs min max where(condition, a, b); across layers:
# sum mean min max lowest_layer highest_layer at_min at_max; running sums:
# upward_sum downward_sum; neighbours: above(x, edge) below(x, edge), where `edge` is
# what the lowest (below) or highest (above) layer gets instead.
column z_mid [m] = (z_bottom + z_top) / 2
column theta [K] = T * (1000 [hPa] / p_mid) ^ kappa
# lapse rate between the neighbouring layers' means (centred; one-sided at the ends,
# where the edge value is the layer itself): positive when T falls with height
column lapse_rate [K/km] = (below(T, T) - above(T, T)) / (above(z_mid, z_mid) - below(z_mid, z_mid))
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
scenario drier from warmer_aloft "as warmer_aloft, and 5 K drier below 700 hPa"
  add -5 K to Td below 700 hPa
end
'''
