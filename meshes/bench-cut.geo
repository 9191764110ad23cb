// Example site (invented, for demonstration only): a strip footing on the middle
// bench of a stepped cut in stiff clay over dense gravel. The cut rises 2 m on the
// left at 1:1 and falls 3 m beyond the bench's crest on the right at 1:1.
// Coordinates in m, x to the right, y up (elevations on an invented site datum).
// Groups follow meshes/README.md: one surface group per layer, curve groups
// "footing", "ground", "far side", "far base".

B = 1.6;          // footing width, m
x_foot = 10.4;    // left edge of the footing, m
bench = 10.0;     // bench level = footing level, m

Point(1)  = {0, 0, 0};             // far base, left
Point(2)  = {28, 0, 0};            // far base, right
Point(3)  = {28, 5, 0};            // clay / gravel interface, right
Point(4)  = {28, 7, 0};            // lower ground at the right far side
Point(5)  = {17, 7, 0};            // toe of the lower cut
Point(6)  = {14, bench, 0};        // crest of the lower cut
Point(7)  = {x_foot + B, bench, 0};
Point(8)  = {x_foot, bench, 0};
Point(9)  = {8, bench, 0};         // toe of the upper cut
Point(10) = {6, bench + 2, 0};     // crest of the upper cut
Point(11) = {0, bench + 2, 0};     // upper ground at the left far side
Point(12) = {0, 5, 0};             // clay / gravel interface, left

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
Line(13) = {12, 3};               // layer interface, inside the soil: in no curve group

Curve Loop(1) = {13, 3, 4, 5, 6, 7, 8, 9, 10, 11};
Plane Surface(1) = {1};
Curve Loop(2) = {1, 2, -13, 12};
Plane Surface(2) = {2};

Physical Surface("stiff clay") = {1};
Physical Surface("dense gravel") = {2};
Physical Curve("footing") = {7};
Physical Curve("ground") = {4, 5, 6, 8, 9, 10};
Physical Curve("far side") = {2, 3, 11, 12};
Physical Curve("far base") = {1};
