/**
 * The one caution every output carries (CLI, summary.json, README, app).
 * Heights and crowns come from a point cloud, so they are estimates; the
 * wording says what that means for decisions about trees near people.
 */
export const CAUTION =
  'Tree heights, crown outlines and crown areas in this inventory are estimates made from remote sensing ' +
  '(an airborne or drone point cloud). They can be wrong for individual trees: crowns that touch can merge ' +
  'or split, low branches and leaning stems are not seen as a person on the ground sees them, and the ground ' +
  'surface under dense canopy is interpolated. This inventory is not a tree risk assessment. Before any ' +
  'decision about a tree near a path, road, building or other place where people gather, follow your local ' +
  'codes and have the tree inspected by a qualified, licensed arborist.';
