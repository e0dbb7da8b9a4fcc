"""placeholder"""
def prepare(budget):
    return budget, ()
