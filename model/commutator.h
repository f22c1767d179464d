// rotorbench model: the commutator as the brushes see it.
//
// A small 2-pole armature with K segments is a closed ring of K coils (the 3-slot
// "delta" armature is K = 3). Two brushes 180° apart each touch one segment, or bridge
// two and short the coil between them. The resistance between the brushes therefore
// depends on rotor angle — which is why a locked-rotor reading depends on position and
// why the current ripples while the motor turns. Geometry in radians; Rc = one coil.
// Pure; thread-safe.
#pragma once

namespace rb::model {

/// Brush-to-brush resistance divided by one coil's resistance Rc, for a ring of
/// `segments` coils at rotor angle theta [rad]. `brush_fraction` is the brush contact
/// width as a fraction of one segment pitch (0 = knife-edge brushes, must be < 1).
/// For K = 3 it is 2/3 with both brushes on single segments and 1/2 while a brush
/// bridges two segments (derived in docs/design.md §commutator).
double BrushResistanceFactor(int segments, double brush_fraction, double theta);

/// The same factor averaged over one revolution (numerically, 3600 points).
double MeanBrushResistanceFactor(int segments, double brush_fraction);

/// Current ripples per revolution of a 2-pole motor with K segments: K if K is even,
/// 2K if K is odd (the brushes commutate at different moments).
int RipplesPerRevolution(int segments);

}  // namespace rb::model
