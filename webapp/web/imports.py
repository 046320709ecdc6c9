from flask import Blueprint

bp = Blueprint("imports", __name__)
