from . import regenerate

print(regenerate())
