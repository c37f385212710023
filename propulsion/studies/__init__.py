"""Studies: runners that evaluate several missions (options) and put them side by side.

Each study takes checked :class:`~propulsion.mission.Mission` objects and returns a result
object in SI units with ``to_frame()`` and ``to_dict()``; presentation is left to
:mod:`propulsion.report`. Import the runners from their modules, for example
``from propulsion.studies.compare import compare``.
"""
