// Bad site file for the tests (invented): a curve loop that goes round a curve twice.
W = 8; D = 6; B = 2;
Point(1) = {-W, -D, 0}; Point(2) = {W, -D, 0}; Point(3) = {W, 0, 0};
Point(4) = {B/2, 0, 0}; Point(5) = {-B/2, 0, 0}; Point(6) = {-W, 0, 0};
Line(1) = {1, 2}; Line(2) = {2, 3}; Line(3) = {3, 4}; Line(4) = {4, 5}; Line(5) = {5, 6}; Line(6) = {6, 1};
Curve Loop(1) = {1, 2, 3, 4, 5, 6, 1, -1};
Plane Surface(1) = {1};
