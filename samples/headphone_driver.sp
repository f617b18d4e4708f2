* Headphone driver: a common-source gain stage AC coupled straight into a 32 ohm earpiece.
* The stage's 10 kohm output cannot drive 32 ohm; it needs a follower or a push-pull output.
* lintamp: bandwidth 20k
* lintamp: voltage-output hpout
* lintamp: load rear
.include models.lib

vdd vdd 0 3.0
vin in 0 dc 0.75 ac 1
rd vdd hpout 10k
m1 hpout in 0 0 nch W=10u L=1u
cout hpout ear 220u
rear ear 0 32
.end
