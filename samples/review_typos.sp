* Thermocouple preamplifier handed over for review: four slips a simulator would stop on
.include models.lib
.param rgain=47k

.subckt preamp inp inn out vdd vss
m1 x1 inp tail vss nch W=20u L=2u
m2 out inn tail vss nch W=20u L=2u
m3 x1 x1 vdd vdd pch W=40u L=2u
m4 out x1 vdd vdd pch W=40u L=2u
itail tail vss 20u
.ends preamp

vdd vdd 0 3.0
vin tc 0 dc 1.2 ac 1
* the preamp has five ports; this instance connects four
xamp tc fb out vdd preamp
* the feedback resistor names a parameter that was renamed
rf out fb {rgian}
rg fb 0 1k
* a level shifter pasted twice under one name
rg fb 0 2k
* a model name with two letters swapped
m5 out out 0 0 nhc W=2u L=1u
.op
.end
