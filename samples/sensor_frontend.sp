* Optical receiver front end: photodiode current into a common-gate stage, then a source follower
* lintamp: current-input pd
* lintamp: voltage-output out
* lintamp: bandwidth 20meg
.include models.lib

vdd vdd 0 3.0
vg1 g1 0 1.5
* the photodiode: signal current with its junction capacitance
ipd pd 0 dc 0 ac 1
cpd pd 0 1p
* common-gate input device, biased by a 100 uA sink at its source
m1 d1 g1 pd 0 nch W=10u L=1u
ibias pd 0 100u
rd vdd d1 10k
* source follower to drive the next stage
m2 vdd d1 out 0 nch W=10u L=1u
ibuf out 0 100u
.ac dec 10 1k 1g
.end
