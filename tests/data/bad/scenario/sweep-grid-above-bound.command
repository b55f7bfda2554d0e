sweep {input} --vary switching.frequency=100kHz:3MHz:1001 --vary switching.duty=0.2:0.3:1000 --csv {out}
