* Capacitive touch-sensor front end: the electrode current into a gate stage biased by 1 Mohm.
* The electrode current needs a low-impedance input; this one integrates on the pad capacitance.
* lintamp: bandwidth 200k
.include models.lib

vdd vdd 0 3.0
* the touch electrode: signal current with 10 pF of pad and trace capacitance
itouch vdd pad dc 0 ac 1
cpad pad 0 10p
* a bare gate, biased through 1 Mohm only (the mistake)
rbias pad vb 1meg
vb vb 0 0.75
rd vdd det 20k
m1 det pad 0 0 nch W=10u L=1u
.ac dec 10 1k 100meg
.end
