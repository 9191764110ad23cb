// Bad site file for the tests (invented): a lens of clay drawn on top of the soil round
// it instead of as its hole.
Point(1) = {-10, -8, 0}; Point(2) = {10, -8, 0}; Point(3) = {10, 0, 0};
Point(4) = {1, 0, 0}; Point(5) = {-1, 0, 0}; Point(6) = {-10, 0, 0};
Line(1) = {1, 2}; Line(2) = {2, 3}; Line(3) = {3, 4}; Line(4) = {4, 5}; Line(5) = {5, 6}; Line(6) = {6, 1};
Curve Loop(1) = {1, 2, 3, 4, 5, 6};
Plane Surface(1) = {1};
Point(7) = {-2, -5, 0}; Point(8) = {2, -5, 0}; Point(9) = {2, -3, 0}; Point(10) = {-2, -3, 0};
Line(7) = {7, 8}; Line(8) = {8, 9}; Line(9) = {9, 10}; Line(10) = {10, 7};
Curve Loop(2) = {7, 8, 9, 10};
Plane Surface(2) = {2};
Physical Surface("clay") = {1, 2};
Physical Curve("far base") = {1};
Physical Curve("far side") = {2, 6};
Physical Curve("ground") = {3, 5};
Physical Curve("footing") = {4};
