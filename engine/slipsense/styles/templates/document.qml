<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>
<!-- slipsense default style "{{STYLE}}" for QGIS 3.22 (written by slipsense; see engine/slipsense/styles). -->
<qgis version="3.22.0" styleCategories="Symbology|Labeling" labelsEnabled="{{LABELS_ENABLED}}" hasScaleBasedVisibilityFlag="0" minScale="100000000" maxScale="0">
{{RENDERER}}
{{LABELING}}
 <layerGeometryType>{{GEOMETRY_CODE}}</layerGeometryType>
</qgis>
