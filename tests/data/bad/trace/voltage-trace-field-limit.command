compare {input} --limits cispr32-class-b-radiated-3m --csv {out}
