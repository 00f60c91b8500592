"""The field calculator page. Works without scripts (a plain POST); with scripts it asks the API."""

from django.contrib.auth.decorators import login_required
from django.shortcuts import render

from ..calculators import CALCULATORS, CalcError, calculate, calculator_context, input_fields, places_for


@login_required
def calculator(request):
    system = request.user.unit_system
    places = places_for(request.user)  # the person's sites (their air pressure), the first the default
    answered, results, errors, typed = None, None, {}, {}
    if request.method == "POST" and request.POST.get("calculator") in CALCULATORS:
        answered = request.POST["calculator"]
        typed = {k: request.POST.get(k, "") for k in (i.name for i in CALCULATORS[answered].inputs)}
        try:
            results = calculate(name=answered, values=typed, system=system, places=places)
        except CalcError as exc:
            errors = exc.errors
    calcs = []
    for calc in CALCULATORS.values():
        fields = input_fields(calc, system, places)
        if calc.name == answered:
            for f in fields:
                f["value"] = typed.get(f["name"], "")
                f["errors"] = errors.get(f["name"], [])
        calcs.append(
            {
                "calc": calc,
                "help": calc.help_in(system),
                "fields": fields,
                "results": results if calc.name == answered else None,
                "errors": errors.get("non_field_errors", []) if calc.name == answered else [],
            }
        )
    return render(
        request,
        "frontend/technician/calculator.html",
        {"calcs": calcs, "calculator_context": calculator_context(places)},
    )
