sweep {input} --vary switching.frequency=100kHz:3MHz:1000001 --csv {out}
