"""The import name is `rankscope`; its code lives in app/ (the repository's fixed layout).

setuptools cannot rename a package that `packages.find` finds, so the subpackages are listed
here under their installed names and mapped onto app/ by package_dir. The pages' templates
and static files ride along as package data, for installs from a wheel.
"""

from setuptools import find_packages, setup

setup(
    packages=["rankscope" + name[len("app"):] for name in find_packages(include=["app", "app.*"])]
    + ["rankscope.templates", "rankscope.static"],
    package_dir={"rankscope": "app", "rankscope.templates": "templates",
                 "rankscope.static": "static"},
    package_data={"rankscope.templates": ["*.html"], "rankscope.static": ["*"]},
)
