* Electret microphone preamplifier: the input is AC-coupled into a common-source stage
* and the stage's current-source load is mirrored from a reference branch
.include models.lib

vdd vdd 0 3.0
* the capsule, as a signal source behind its coupling capacitor
vmic mic 0 dc 0 ac 10m
cin mic g1 1u
* common-source gain device: its gate sits behind cin with nothing to set its DC level
m1 out g1 0 0 nch W=20u L=1u
* PMOS mirror load: the reference device mp0 was meant to be diode-connected (gate to drain)
iref pref 0 20u
mp0 pref pg vdd vdd pch W=20u L=1u
mp1 out pg vdd vdd pch W=20u L=1u
cl out 0 5p
.op
.end
