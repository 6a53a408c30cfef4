"""Lumped thermal network of a shaded-pole magnet, coupled to the electrical losses.

Modules: ``air`` (properties of air), ``convection`` (natural-convection correlations and the
radiation coefficient of outer surfaces), ``network`` (nodes, conductances and surfaces of a
design; the heat balance at a temperature state), ``coupling`` (temperatures and losses that
agree, ``solve_coupled``), ``limits`` (a held part, the time from cold to each limit).
Temperatures are in degC, everything else SI.

Worked example (the demo design, optim/demo/demo_design.toml, with this [thermal] and [supply])::

    [thermal]                                 [supply]
    duty_cycle = 0.1                          max_voltage_V = 120.0
    period_s = 10.0                           max_current_A = 10.0
    hold_time_s = 5.0                         max_VA = 600.0
    emissivity = 0.9
    coil_insulation_class = "F"
    target_limit_C = 60.0
    ring_limit_C = 150.0

At 20 degC the 6 A coil loses 37.82 W (R = 1.051 Ohm), the ring 1.535 W, the target 0.175 W.
Coupled (5 electrical solves): the coil's mean settles at 65.75 degC, so its loss is
37.82 x (1 + 0.00393 x 45.75) = 44.62 W on, 4.46 W averaged over the 10 % duty; the ring 1.606 W,
the target 0.168 W. Temperatures: coil hot spot 67.1 degC (mean + 1.4 K inside the winding),
core 63.7, face 63.4, ring 63.5, target 41.8 at steady state, a part held 5 s from 25 degC
30.6 degC. Supply: 83.6 V rms, 6 A, 501.5 VA, power factor 0.093. Margins: coil 87.9 K (class F,
155 degC), ring 86.5 K, held part 29.4 K, core flux 0.91 T (0.59 of 1.5 T), voltage 36.4 V,
current 4 A, apparent power 98.5 VA. Binding: the apparent power (98.5 / 600 = 16 % left; the
coil has 87.9 / 130 = 68 % of its allowed rise left). Run continuously from cold the coil's hot
spot reaches 155 degC in 3.4 min, the ring 150 degC in 5.7 min, a held part 60 degC in 74 s.
Pull 3.18 mN against 3.32 mN at 20 degC (-4 %: the hotter ring carries less current). The same
design at continuous duty (no [thermal]) is a runaway: its coil would pass 400 degC.

References
----------
Incropera, DeWitt, Bergman, Lavine, *Fundamentals of Heat and Mass Transfer*, 6th/7th ed.
Churchill and Chu, Int. J. Heat Mass Transfer 18 (1975) 1323-1329 and 1049-1053.
White, *Viscous Fluid Flow*, Table 1-2 (Sutherland's law for air).
Mellor, Roberts and Turner, IEE Proc. B 138 (1991) 205-218 (lumped thermal model of a machine).
Each module names the equations it uses.
"""
