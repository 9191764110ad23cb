// Bad site file for the tests (invented): an interface ends on the far side between its
// end points instead of splitting it.
W = 8; D = 6; B = 2;
Point(1) = {-W, -D, 0}; Point(2) = {W, -D, 0}; Point(3) = {W, 0, 0};
Point(4) = {B/2, 0, 0}; Point(5) = {-B/2, 0, 0}; Point(6) = {-W, 0, 0};
Point(7) = {-W, -3, 0}; Point(8) = {W, -3, 0};
Line(1) = {1, 2}; Line(2) = {2, 8}; Line(3) = {8, 3}; Line(4) = {3, 4}; Line(5) = {4, 5}; Line(6) = {5, 6};
Line(7) = {6, 1}; Line(8) = {7, 8};
Curve Loop(1) = {1, 2, 3, 4, 5, 6, 7};
Plane Surface(1) = {1};
Physical Surface("clay") = {1};
Physical Curve("far base") = {1};
Physical Curve("far side") = {2, 3, 7};
Physical Curve("ground") = {4, 6};
Physical Curve("footing") = {5};
