rule x:
    output: "x"
