spectrum --capture {input} --fundamental 150kHz --max-frequency 100MHz --csv {out}
