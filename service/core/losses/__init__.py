"""Loss correlations of axial blade rows and the stage efficiencies that follow from them.

One module per correlation family:

- :mod:`~service.core.losses.soderberg`: Soderberg's turbine row loss with its aspect-ratio and
  Reynolds corrections (Dixon & Hall, ch. 4);
- :mod:`~service.core.losses.lieblein`: Lieblein's compressor profile loss from the wake
  momentum thickness and the equivalent diffusion ratio (NASA SP-36, ch. 6);
- :mod:`~service.core.losses.howell`: Howell's annulus and secondary drag and a tip-clearance
  drag of compressor rows (Saravanamuttoo et al., ch. 5);
- :mod:`~service.core.losses.ainley`: the Ainley-Mathieson family with the Dunham-Came and
  Kacker-Okapuu revisions, as far as the published equations go (AM's profile charts and KO's
  trailing-edge chart are not fitted; see the module);
- :mod:`~service.core.losses.efficiency`: loss-coefficient conversions and the stage
  total-to-total and total-to-static efficiencies from the row losses;
- :mod:`~service.core.losses.stage`: :func:`evaluate_stage_efficiency`, a named correlation set
  applied to a stage's triangles.
"""
