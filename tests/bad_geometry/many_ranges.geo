// Bad site file for the tests (invented): group lists of many ranges; read in full they
// once took gigabytes.
W = 8; D = 6; B = 2;
Point(1) = {-W, -D, 0}; Point(2) = {W, -D, 0}; Point(3) = {W, 0, 0};
Point(4) = {B/2, 0, 0}; Point(5) = {-B/2, 0, 0}; Point(6) = {-W, 0, 0};
Line(1) = {1, 2}; Line(2) = {2, 3}; Line(3) = {3, 4}; Line(4) = {4, 5}; Line(5) = {5, 6}; Line(6) = {6, 1};
Curve Loop(1) = {1, 2, 3, 4, 5, 6};
Plane Surface(1) = {1};
Physical Surface("clay") = {1};
Physical Curve("far base") = {1};
Physical Curve("far side") = {2, 6};
Physical Curve("ground") = {3, 5};
Physical Curve("footing") = {4};

Physical Curve("extra 0") = {1:9000};
Physical Curve("extra 1") = {1:9000};
Physical Curve("extra 2") = {1:9000};
Physical Curve("extra 3") = {1:9000};
Physical Curve("extra 4") = {1:9000};
Physical Curve("extra 5") = {1:9000};
Physical Curve("extra 6") = {1:9000};
Physical Curve("extra 7") = {1:9000};
Physical Curve("extra 8") = {1:9000};
Physical Curve("extra 9") = {1:9000};
Physical Curve("extra 10") = {1:9000};
Physical Curve("extra 11") = {1:9000};
Physical Curve("extra 12") = {1:9000};
Physical Curve("extra 13") = {1:9000};
Physical Curve("extra 14") = {1:9000};
Physical Curve("extra 15") = {1:9000};
Physical Curve("extra 16") = {1:9000};
Physical Curve("extra 17") = {1:9000};
Physical Curve("extra 18") = {1:9000};
Physical Curve("extra 19") = {1:9000};
