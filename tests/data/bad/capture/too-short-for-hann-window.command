spectrum --capture {input} --fundamental 1MHz --max-frequency 100MHz --csv {out}
