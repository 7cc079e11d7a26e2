"""Figures: slice maps, migration map, chronostratigraphic chart, core panel.

matplotlib is imported inside the figure modules only, so ``import paleomap`` stays light.
"""

__all__: list[str] = []
