// Example site (invented, for demonstration only): a strip footing cast in an open
// trench 1.0 m deep (vertical walls, 0.4 m of trench floor each side), in clayey
// sand over firm clay on a rock head 6 m below the ground. The rock is a fixed
// boundary: the soil is bonded to it and it carries any traction.
// Coordinates in m, x to the right, y up; y = 0 is the ground. Groups follow
// meshes/README.md.

B = 1.6;         // footing width, m
t = 1.2;         // half-width of the trench, m
d = 1.0;         // depth of the trench, m
W = 16.0;        // half-width of the model, m
rock = -6.0;     // rock head, m

Point(1)  = {-W, rock, 0};
Point(2)  = {W, rock, 0};
Point(3)  = {W, -3, 0};            // sand / clay interface, right
Point(4)  = {W, 0, 0};
Point(5)  = {t, 0, 0};             // top of the right trench wall
Point(6)  = {t, -d, 0};
Point(7)  = {B/2, -d, 0};
Point(8)  = {-B/2, -d, 0};
Point(9)  = {-t, -d, 0};
Point(10) = {-t, 0, 0};
Point(11) = {-W, 0, 0};
Point(12) = {-W, -3, 0};           // sand / clay interface, left

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
Line(13) = {12, 3};                // layer interface (inside the soil)

Curve Loop(1) = {13, 3, 4, 5, 6, 7, 8, 9, 10, 11};
Plane Surface(1) = {1};
Curve Loop(2) = {1, 2, -13, 12};
Plane Surface(2) = {2};

Physical Surface("clayey sand") = {1};
Physical Surface("firm clay") = {2};
Physical Curve("footing") = {7};
Physical Curve("ground") = {4, 5, 6, 8, 9, 10};
Physical Curve("far side") = {2, 3, 11, 12};
Physical Curve("fixed") = {1};
