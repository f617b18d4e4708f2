* Bias generator for a sensor interface: a resistor-set reference current and an NMOS mirror
.include models.lib

.subckt biasgen nbias vdd vss
* reference branch: 100 uA nominal through rref into the diode-connected m0
rref vdd nbias 18k
m0 nbias nbias vss vss nch W=10u L=1u
.ends biasgen

.subckt sink2 out1 out2 nbias vss
m1 out1 nbias vss vss nch W=10u L=1u
m2 out2 nbias vss vss nch W=20u L=1u
.ends sink2

vdd vdd 0 3.0
xbias nb vdd 0 biasgen
xsink o1 o2 nb 0 sink2
rl1 vdd o1 10k
rl2 vdd o2 5k
.op
.end
