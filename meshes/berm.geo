// Example site (invented, for demonstration only): a strip footing on the crest of
// a 1.5 m earth berm of compacted fill (side slopes about 1:3.3) built on soft clay
// that firms up with depth. Coordinates in m, x to the right, y up; y = 0 is the
// original ground. Groups follow meshes/README.md.

B = 1.2;        // footing width, m
h = 1.5;        // berm height, m
top = 4.0;      // half-width of the berm's crest, m
toe = 9.0;      // half-width of the berm at its toe, m
W = 16.0;       // half-width of the model, m

Point(1)  = {-W, -12, 0};
Point(2)  = {W, -12, 0};
Point(3)  = {W, -4, 0};            // soft / firm clay interface, right
Point(4)  = {W, 0, 0};             // original ground at the right far side
Point(5)  = {toe, 0, 0};           // right toe of the berm
Point(6)  = {top, h, 0};           // right crest
Point(7)  = {B/2, h, 0};
Point(8)  = {-B/2, h, 0};
Point(9)  = {-top, h, 0};          // left crest
Point(10) = {-toe, 0, 0};          // left toe
Point(11) = {-W, 0, 0};
Point(12) = {-W, -4, 0};           // soft / firm clay interface, left

Line(1)  = {1, 2};
Line(2)  = {2, 3};
Line(3)  = {3, 4};
Line(4)  = {4, 5};
Line(5)  = {5, 6};
Line(6)  = {6, 7};
Line(7)  = {7, 8};
Line(8)  = {8, 9};
Line(9)  = {9, 10};
Line(10) = {10, 11};
Line(11) = {11, 12};
Line(12) = {12, 1};
Line(13) = {12, 3};                // clay interface (inside the soil)
Line(14) = {10, 5};                // base of the berm (inside the soil)

Curve Loop(1) = {14, 5, 6, 7, 8, 9};
Plane Surface(1) = {1};            // berm fill
Curve Loop(2) = {13, 3, 4, -14, 10, 11};
Plane Surface(2) = {2};            // soft clay
Curve Loop(3) = {1, 2, -13, 12};
Plane Surface(3) = {3};            // firm clay

Physical Surface("berm fill") = {1};
Physical Surface("soft clay") = {2};
Physical Surface("firm clay") = {3};
Physical Curve("footing") = {7};
Physical Curve("ground") = {4, 5, 6, 8, 9, 10};
Physical Curve("far side") = {2, 3, 11, 12};
Physical Curve("far base") = {1};
