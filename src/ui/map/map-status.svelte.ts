/**
 * What the map shows right now, for the panels that speak about it: the surface cells drawn (so a
 * progress counter can say how much of the arriving surface is on the map, not only computed).
 * Written by MapView, read by the Surface step.
 */
class MapStatus {
  /** Cells of the surface on the map (computed cells in the picture last drawn); 0 before one is drawn. */
  drawnCells = $state(0);
  /** The surface key the drawn cells belong to. */
  drawnKey = $state('');
}

export const mapStatus = new MapStatus();
