compare {input} --limits cispr32-class-b-conducted --correction /dev/zero --csv {out}
