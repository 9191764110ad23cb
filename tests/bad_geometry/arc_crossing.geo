// Bad site file for the tests (invented): an arc on the left side dips below the far base.
Point(1) = {-10, -8, 0}; Point(2) = {10, -8, 0}; Point(3) = {10, 0, 0};
Point(4) = {1, 0, 0}; Point(5) = {-1, 0, 0}; Point(6) = {-10, 0, 0};
Point(7) = {-10, -5, 0}; Point(8) = {-6, -5, 0}; Point(9) = {-4, -5 - 4 * Sin(Pi/3), 0};
Line(1) = {1, 2}; Line(2) = {2, 3}; Line(3) = {3, 4}; Line(4) = {4, 5}; Line(5) = {5, 6}; Line(6) = {6, 7};
Circle(7) = {7, 8, 9};
Line(8) = {9, 1};
Curve Loop(1) = {1, 2, 3, 4, 5, 6, 7, 8};
Plane Surface(1) = {1};
Physical Surface("clay") = {1};
Physical Curve("far base") = {1};
Physical Curve("far side") = {2, 6, 7, 8};
Physical Curve("ground") = {3, 5};
Physical Curve("footing") = {4};
