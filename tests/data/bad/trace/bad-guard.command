compare {input} --limits cispr32-class-b-conducted --guard 6dBx --csv {out}
