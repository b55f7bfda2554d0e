spectrum --capture {input} --scale 0 --csv {out}
