"""The Brick class names Plenum uses are the Brick Schema's own (the ontology shipped inside brickschema)."""

from brickschema.namespaces import BRICK
from rdflib import OWL, RDF

from automation.brick import brick_ontology
from automation.vocabulary import POINT_CLASSES, PointUnit, all_brick_names, component_brick_class


def test_every_name_is_a_class_of_thebrick_ontology():
    """Every point and equipment class name is an owl:Class of Brick 1.5, and not a deprecated one."""
    ontology = brick_ontology()
    for name in sorted(all_brick_names()):
        assert (BRICK[name], RDF.type, OWL.Class) in ontology, name
        assert ontology.value(BRICK[name], OWL.deprecated) is None, name


def test_point_classes_have_si_units():
    """Each point class names one of the SI units Plenum keeps."""
    assert {c.unit for c in POINT_CLASSES.values()} <= set(PointUnit.values)
    assert POINT_CLASSES["CO2_Level_Sensor"].unit == "PPM"
    assert POINT_CLASSES["Filter_Differential_Pressure_Sensor"].unit == "PA"


def test_components_map_to_brick_equipment():
    """A supply fan is a Supply_Fan, an outdoor-air damper an Outside_Damper; a part Brick has no class for is
    HVAC_Equipment."""
    assert component_brick_class(kind="fan", specs={"role": "supply"}) == "Supply_Fan"
    assert component_brick_class(kind="damper", specs={"role": "outdoor"}) == "Outside_Damper"
    assert component_brick_class(kind="filter_bank", specs={"stage": "final"}) == "Final_Filter"
    assert component_brick_class(kind="drain_pan", specs={}) == "HVAC_Equipment"
