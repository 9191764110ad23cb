// Bad site file for the tests (invented): a curve inside the soil in a boundary group
W = 8; D = 6; B = 2;
Point(1) = {-W, -D, 0}; Point(2) = {W, -D, 0}; Point(3) = {W, 0, 0};
Point(4) = {B/2, 0, 0}; Point(5) = {-B/2, 0, 0}; Point(6) = {-W, 0, 0};
Point(7) = {W, -3, 0}; Point(8) = {-W, -3, 0};
Line(1) = {1, 2}; Line(2) = {2, 7}; Line(8) = {7, 3}; Line(3) = {3, 4}; Line(4) = {4, 5}; Line(5) = {5, 6};
Line(6) = {6, 8}; Line(9) = {8, 1}; Line(7) = {8, 7};
Curve Loop(1) = {7, 8, 3, 4, 5, 6};
Plane Surface(1) = {1};
Curve Loop(2) = {1, 2, -7, 9};
Plane Surface(2) = {2};
Physical Surface("clay") = {1, 2};
Physical Curve("far base") = {1};
Physical Curve("far side") = {2, 8, 6, 9};
Physical Curve("ground") = {3, 5, 7};
Physical Curve("footing") = {4};
